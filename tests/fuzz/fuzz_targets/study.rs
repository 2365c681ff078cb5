//! Any text as a study file: an error or a valid study that writes back as
//! itself, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use pairsight_core::study::Study;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(s) = Study::from_toml(text) {
        let again = s.to_toml().expect("a valid study writes");
        assert_eq!(Study::from_toml(&again).as_ref(), Ok(&s), "{again}");
    }
});
