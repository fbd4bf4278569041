//! Colours of the plots. Two palettes kept apart: terrain colours (the plan and map shading,
//! mid to light, L* 55-85) and route colours (predicted paths and chart series, dark or
//! strongly saturated), so a predicted path never reads as a terrain. The route palette was
//! chosen so its colours stay apart from each other under simulated protanopia, deuteranopia and
//! tritanopia as well; its tests compute the CIELAB distances (delta-E 76).

use plotters::style::RGBColor;

/// A failing leg or spot.
pub(crate) const FAIL_RED: RGBColor = RGBColor(220, 30, 30);
/// A leg or spot with a caution.
pub(crate) const CAUTION_AMBER: RGBColor = RGBColor(240, 170, 0);
/// Text and outlines.
pub(crate) const INK: RGBColor = RGBColor(30, 30, 30);

/// Predicted paths by rank (compare) and chart series, in order of use.
pub(crate) const ROUTE_COLORS: [RGBColor; 5] =
    [RGBColor(0, 0, 0), RGBColor(0, 45, 255), RGBColor(75, 90, 0), RGBColor(195, 75, 210), RGBColor(225, 60, 135)];

/// The `i`-th route or series colour (cycling).
pub(crate) fn route_color(i: usize) -> RGBColor {
    ROUTE_COLORS[i % ROUTE_COLORS.len()]
}

/// `c` taken `share` of the way to white.
pub(crate) fn tint(c: RGBColor, share: f64) -> RGBColor {
    let light = |v: u8| (f64::from(v) + (255.0 - f64::from(v)) * share).round() as u8;
    RGBColor(light(c.0), light(c.1), light(c.2))
}

/// Colours of the terrains named in the demo profile and the docs.
const KNOWN_TERRAINS: [(&str, RGBColor); 8] = [
    ("asphalt", RGBColor(140, 140, 148)),
    ("gravel", RGBColor(200, 155, 100)),
    ("grass", RGBColor(125, 185, 85)),
    ("packed-snow", RGBColor(155, 205, 240)),
    ("deep-snow", RGBColor(95, 145, 215)),
    ("slush", RGBColor(190, 170, 220)),
    ("mud", RGBColor(160, 125, 90)),
    ("ice", RGBColor(125, 220, 215)),
];

/// Colours of other terrains, picked by a stable hash of the name.
const OTHER_TERRAINS: [RGBColor; 6] = [
    RGBColor(240, 185, 100),
    RGBColor(230, 160, 200),
    RGBColor(110, 195, 165),
    RGBColor(190, 190, 100),
    RGBColor(200, 190, 165),
    RGBColor(225, 150, 130),
];

/// Colour of a terrain on plots. The known terrains have fixed colours of our own choosing;
/// others take one from a fallback palette by a stable hash of the name.
pub fn terrain_color(terrain: &str) -> RGBColor {
    if let Some((_, c)) = KNOWN_TERRAINS.iter().find(|(name, _)| *name == terrain) {
        return *c;
    }
    let h = terrain.bytes().fold(5381u32, |h, b| h.wrapping_mul(33) ^ u32::from(b));
    OTHER_TERRAINS[(h % OTHER_TERRAINS.len() as u32) as usize]
}

/// The light fill of a terrain on the map: its colour two thirds of the way to white, opaque,
/// so overlapping polygons show the later one (as the cutting does) and the plan stays legible.
pub fn terrain_fill(terrain: &str) -> RGBColor {
    tint(terrain_color(terrain), 0.68)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// sRGB (IEC 61966-2-1) channel to linear light.
    fn lin(v: u8) -> f64 {
        let v = f64::from(v) / 255.0;
        if v <= 0.04045 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    }

    /// sRGB (IEC 61966-2-1) to CIELAB (CIE 15, D65 white), each step written out here.
    fn lab(c: RGBColor) -> [f64; 3] {
        lab_of_linear([lin(c.0), lin(c.1), lin(c.2)])
    }

    fn lab_of_linear([r, g, b]: [f64; 3]) -> [f64; 3] {
        // sRGB primaries to XYZ, D65 (IEC 61966-2-1).
        let x = 0.4124 * r + 0.3576 * g + 0.1805 * b;
        let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
        let z = 0.0193 * r + 0.1192 * g + 0.9505 * b;
        let f = |t: f64| {
            let d: f64 = 6.0 / 29.0;
            if t > d.powi(3) {
                t.cbrt()
            } else {
                t / (3.0 * d * d) + 4.0 / 29.0
            }
        };
        let (fx, fy, fz) = (f(x / 0.95047), f(y), f(z / 1.08883));
        [116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)]
    }

    fn delta_e76(a: [f64; 3], b: [f64; 3]) -> f64 {
        ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
    }

    fn all_terrains() -> Vec<RGBColor> {
        KNOWN_TERRAINS.iter().map(|(_, c)| *c).chain(OTHER_TERRAINS).collect()
    }

    #[test]
    fn lab_of_white_and_black_are_the_reference_points() {
        // CIE 15: the reference white is L* = 100, a* = b* = 0; black is L* = 0.
        let w = lab(RGBColor(255, 255, 255));
        assert!((w[0] - 100.0).abs() < 0.01 && w[1].abs() < 0.05 && w[2].abs() < 0.05, "{w:?}");
        assert!(lab(RGBColor(0, 0, 0))[0].abs() < 1e-9);
        // sRGB red (255, 0, 0) is about L* 53.2, a* 80.1, b* 67.2 (common practice, no source:
        // the widely quoted value).
        let r = lab(RGBColor(255, 0, 0));
        assert!((r[0] - 53.24).abs() < 0.1 && (r[1] - 80.09).abs() < 0.2 && (r[2] - 67.20).abs() < 0.2, "{r:?}");
    }

    #[test]
    fn route_colours_differ_from_every_terrain_colour_by_at_least_35_delta_e() {
        for t in all_terrains() {
            for c in ROUTE_COLORS {
                let d = delta_e76(lab(t), lab(c));
                assert!(d >= 35.0, "route {c:?} and terrain {t:?}: delta-E {d:.1}");
            }
        }
        // And from the light map fills, which are lighter still.
        for (name, _) in KNOWN_TERRAINS {
            for c in ROUTE_COLORS {
                assert!(delta_e76(lab(terrain_fill(name)), lab(c)) >= 35.0, "{name} fill and {c:?}");
            }
        }
    }

    #[test]
    fn route_colours_stay_apart_from_the_verdict_colours_and_each_other_with_colour_blindness() {
        for c in ROUTE_COLORS {
            for v in [FAIL_RED, CAUTION_AMBER] {
                assert!(delta_e76(lab(c), lab(v)) >= 40.0, "{c:?} too close to verdict colour {v:?}");
            }
        }
        // Machado, Oliveira & Fernandes 2009, "A physiologically-based model for simulation of
        // color vision deficiency", severity 1.0 matrices on linear RGB (from memory).
        let identity = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]];
        let protanopia =
            [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216], [-0.003882, -0.048116, 1.051998]];
        let deuteranopia =
            [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413], [-0.011820, 0.042940, 0.968881]];
        let tritanopia =
            [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602], [0.004733, 0.691367, 0.303900]];
        for (name, m) in [
            ("normal", identity),
            ("protanopia", protanopia),
            ("deuteranopia", deuteranopia),
            ("tritanopia", tritanopia),
        ] {
            let seen = |c: RGBColor| {
                let v = [lin(c.0), lin(c.1), lin(c.2)];
                let s: Vec<f64> =
                    m.iter().map(|row| (row[0] * v[0] + row[1] * v[1] + row[2] * v[2]).clamp(0.0, 1.0)).collect();
                lab_of_linear([s[0], s[1], s[2]])
            };
            for (i, a) in ROUTE_COLORS.iter().enumerate() {
                for b in &ROUTE_COLORS[i + 1..] {
                    let d = delta_e76(seen(*a), seen(*b));
                    assert!(d >= 30.0, "{name}: {a:?} and {b:?} are {d:.1} apart");
                }
            }
        }
    }

    #[test]
    fn unknown_terrains_get_a_stable_colour_from_the_terrain_palette() {
        assert_eq!(terrain_color("moss"), terrain_color("moss"));
        assert!(OTHER_TERRAINS.contains(&terrain_color("moss")));
    }
}
