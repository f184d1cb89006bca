#![no_main]
//! The stand inventory reader must return a stand list or an input error, never panic.
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = hostcut::input::inventory::parse_inventory(data, "fuzz.csv");
});
