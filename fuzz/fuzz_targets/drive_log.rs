//! Fuzzes the drive-log reader (`fit`): any bytes must give a log or a clean error naming the
//! file.
#![no_main]

use std::path::Path;

use libfuzzer_sys::fuzz_target;
use skidroute::fit::log::parse_log;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    match parse_log(Path::new("fuzz.csv"), text) {
        Ok(log) => {
            assert!(log.samples.len() >= 2);
            assert!(log.period_s.is_finite() && log.period_s > 0.0);
            assert!(log.samples.iter().all(|s| s.x_m.is_finite() && s.y_m.is_finite()));
        }
        Err(e) => assert!(e.to_string().starts_with("fuzz.csv: "), "{e}"),
    }
});
