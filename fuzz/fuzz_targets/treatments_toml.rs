#![no_main]
//! The treatment catalogue reader must return a valid catalogue or an input error.
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = hostcut::input::treatments::Catalogue::parse(text, "fuzz.toml");
    }
});
