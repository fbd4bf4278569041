//! Fuzzes the GeoJSON route reader: any bytes must give routes or a clean error naming the file.
#![no_main]

use std::path::Path;

use libfuzzer_sys::fuzz_target;
use skidroute::limits::Limits;
use skidroute::route::{parse_route_text, RouteFormat};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let path = Path::new("fuzz.geojson");
    if let Err(e) = parse_route_text(path, text, RouteFormat::GeoJson, &Limits::default()) {
        assert!(e.to_string().starts_with("fuzz.geojson: "), "{e}");
    }
});
