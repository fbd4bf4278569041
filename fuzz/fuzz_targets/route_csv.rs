//! Fuzzes the CSV route reader: any bytes must give routes or a clean error naming the file.
#![no_main]

use std::path::Path;

use libfuzzer_sys::fuzz_target;
use skidroute::limits::Limits;
use skidroute::route::{parse_route_text, RouteFormat};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let path = Path::new("fuzz.csv");
    match parse_route_text(path, text, RouteFormat::Csv, &Limits::default()) {
        Ok(routes) => {
            for route in &routes {
                for leg in &route.legs {
                    assert!(leg.points.len() >= 2);
                    assert!(leg.points.iter().flatten().all(|v| v.is_finite()));
                }
            }
        }
        Err(e) => assert!(e.to_string().starts_with("fuzz.csv: "), "{e}"),
    }
});
