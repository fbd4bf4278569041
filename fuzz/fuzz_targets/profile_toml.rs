//! Fuzzes the vehicle-profile reader: any bytes must give a profile or a clean error naming the
//! file.
#![no_main]

use std::path::Path;

use libfuzzer_sys::fuzz_target;
use skidroute::vehicle::parse_profile;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    if let Err(e) = parse_profile(Path::new("fuzz.toml"), text) {
        assert!(e.to_string().starts_with("fuzz.toml: "), "{e}");
    }
});
