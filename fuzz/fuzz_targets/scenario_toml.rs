#![no_main]
//! The scenario reader and its validation must return settings or an input error.
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(s) = hostcut::core::scenario::parse_scenario(text, "fuzz.toml", std::path::Path::new("/nonexistent")) {
            let _ = hostcut::app::resolve::validate(&s);
            let _ = s.to_toml();
        }
    }
});
