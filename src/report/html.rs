//! A self-contained HTML report of a check (and optionally a comparison): the plot inline as
//! SVG, the per-leg table, the verdict reasons and the caution. No scripts, no external style
//! sheets, fonts or images, so it opens and reads the same without network access.

use std::fmt::Write;

use crate::assess::{RouteReport, Verdict};
use crate::check::CheckRun;
use crate::compare::Comparison;
use crate::CAUTION;

/// Escapes text for HTML element content and attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

const STYLE: &str = "body{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;margin:24px;color:#222;max-width:1400px}\
h1{font-size:26px}h2{font-size:20px;margin-top:28px}\
table{border-collapse:collapse;font-size:14px;margin:8px 0}\
th,td{border:1px solid #bbb;padding:4px 8px}th{background:#eee}td.n{text-align:right}\
.pass{color:#1a7f1a;font-weight:bold}.caution{color:#b07800;font-weight:bold}.fail{color:#c81e1e;font-weight:bold}\
.caution-box{border:2px solid #b07800;background:#fff8e6;padding:10px 14px;margin:16px 0}\
svg{max-width:100%;height:auto;border:1px solid #ddd}";

fn verdict_span(v: Verdict) -> String {
    format!("<span class=\"{0}\">{1}</span>", v.name(), v.name().to_uppercase())
}

fn opt(x: Option<f64>, decimals: usize, none: &str) -> String {
    x.map_or_else(|| none.to_string(), |v| format!("{v:.decimals$}"))
}

fn route_section(out: &mut String, r: &RouteReport, warnings: &[String]) {
    let _ =
        writeln!(out, "<h2>route '{}' from {}: {}</h2>", escape(&r.route), escape(&r.source), verdict_span(r.verdict));
    let _ = writeln!(
        out,
        "<p>{:.0} m in {:.0} s, largest deviation {:.2} m, energy {:.1} Wh, peak power {:.0} W{}</p>",
        r.length_m,
        r.time_s,
        r.max_deviation_m,
        r.energy_wh,
        r.peak_power_w,
        if r.completed { "" } else { "; the vehicle did not reach the end" }
    );
    // The cross slope shows only when a leg has one (the route was put on an elevation raster).
    let cross = r.legs.iter().any(|l| l.max_cross_slope_pct.is_some());
    out.push_str(
        "<table><tr><th>leg</th><th>terrain</th><th>length m</th><th>speed m/s</th><th>tightest radius m</th>\
         <th>required curv. 1/m</th><th>achievable curv. 1/m</th><th>max dev. m</th><th>RMS dev. m</th>\
         <th>corridor m</th><th>time s</th><th>energy Wh</th><th>peak side thrust N</th><th>peak power W</th>",
    );
    if cross {
        out.push_str("<th>cross slope %</th>");
    }
    out.push_str(
        "<th>traction needs/has</th><th>traction-limited s</th><th>passes up to m/s</th><th>drift CEP95 m</th>\
         <th>verdict</th></tr>\n",
    );
    for l in &r.legs {
        let label = match &l.name {
            Some(n) => format!("{} {}", l.index, escape(n)),
            None => l.index.to_string(),
        };
        let _ = write!(
            out,
            "<tr><td>{label}</td><td>{}</td><td class=n>{:.1}</td><td class=n>{:.1}</td><td class=n>{}</td>\
             <td class=n>{:.3}</td><td class=n>{}</td><td class=n>{:.2}</td><td class=n>{:.2}</td><td class=n>{:.2}</td>\
             <td class=n>{:.0}</td><td class=n>{:.1}</td><td class=n>{:.0}</td><td class=n>{:.0}</td>",
            escape(&l.terrain),
            l.length_m,
            l.speed_mps,
            opt(l.min_planned_radius_m, 1, "straight"),
            l.required_curvature_per_m,
            opt(l.achievable_curvature_per_m, 3, "pivot"),
            l.max_deviation_m,
            l.rms_deviation_m,
            l.corridor_m,
            l.time_s,
            l.energy_wh,
            l.peak_side_thrust_n,
            l.peak_power_w,
        );
        if cross {
            let _ = write!(out, "<td class=n>{}</td>", opt(l.max_cross_slope_pct, 0, "-"));
        }
        let _ = writeln!(
            out,
            "<td class=n>{:.2}/{:.2}</td><td class=n>{:.1}</td><td class=n>{}</td><td class=n>{}</td><td>{}</td></tr>",
            l.traction_coefficient_needed,
            l.traction_coefficient,
            l.traction_limited_s,
            opt(l.max_passing_speed_mps, 2, if l.max_passing_speed_searched { "none" } else { "not searched" }),
            opt(l.drift_cep95_m, 2, "-"),
            verdict_span(l.verdict)
        );
    }
    out.push_str("</table>\n");
    if let Some(d) = &r.drift {
        let _ = writeln!(
            out,
            "<p>drift: 95 % radial error at each leg end if localization is lost from leg {}, {} Monte Carlo \
             samples, seed {}, {}.</p>",
            d.lost_from_leg,
            d.samples,
            d.seed,
            escape(&d.sources)
        );
        for w in &d.warnings {
            let _ = writeln!(out, "<p>drift warning: {}</p>", escape(w));
        }
    } else {
        out.push_str("<p>drift not computed (check --drift adds it).</p>\n");
    }
    let reasons: Vec<String> = r
        .reasons
        .iter()
        .map(|why| format!("route: {}", escape(why)))
        .chain(r.legs.iter().flat_map(|l| {
            // Each reason is tagged with its own level: a failing leg may also carry cautions.
            l.reasons.iter().enumerate().map(move |(k, why)| {
                let level = l.reason_verdicts.get(k).copied().unwrap_or(l.verdict);
                format!("leg {} ({}): {}", l.index, level.name(), escape(why))
            })
        }))
        .collect();
    let reasons = reasons.into_iter().chain(warnings.iter().map(|w| format!("warning: {}", escape(w))));
    let reasons: Vec<String> = reasons.collect();
    if !reasons.is_empty() {
        out.push_str("<ul>\n");
        for why in reasons {
            let _ = writeln!(out, "<li>{why}</li>");
        }
        out.push_str("</ul>\n");
    }
}

fn ranking_section(out: &mut String, c: &Comparison) {
    let on = if c.fell_back_to_time { "time" } else { c.by.name() };
    let seed = c.seed.map_or(String::new(), |s| {
        let sources = c.drift_sources.as_deref().map_or(String::new(), |d| format!(", {}", escape(d)));
        format!("; drift: CEP95 at the route end if localization is lost at the start, seed {s}{sources}")
    });
    let _ = writeln!(out, "<h2>ranking (verdict first, then {on})</h2>");
    if !seed.is_empty() {
        let _ = writeln!(out, "<p>{}</p>", &seed[2..]);
    }
    out.push_str(
        "<table><tr><th>rank</th><th>route</th><th>verdict</th><th>length m</th><th>time s</th><th>energy Wh</th>\
         <th>max dev. m</th><th>failing legs</th><th>drift CEP95 m</th></tr>\n",
    );
    for r in &c.ranking {
        let failing = if r.failing_legs.is_empty() {
            "-".to_string()
        } else {
            r.failing_legs.iter().map(|l| l.to_string()).collect::<Vec<_>>().join(", ")
        };
        let _ = writeln!(
            out,
            "<tr><td class=n>{}</td><td>{}</td><td>{}</td><td class=n>{:.0}</td><td class=n>{:.0}</td><td class=n>{}</td>\
             <td class=n>{:.2}</td><td>{failing}</td><td class=n>{}</td></tr>",
            r.rank,
            escape(&r.route),
            verdict_span(r.verdict),
            r.length_m,
            r.time_s,
            opt(r.energy_wh, 1, "-"),
            r.max_deviation_m,
            opt(r.drift_cep95_m, 2, "-")
        );
    }
    out.push_str("</table>\n");
}

/// The headline: for a check the worst verdict of all routes; for a comparison the best
/// alternative's (a comparison fails only when its best route fails). Under `strict` a caution
/// is said to count as a failure, as it does for the exit code.
fn headline(run: &CheckRun, comparison: Option<&Comparison>, strict: bool) -> String {
    let strict_note = |v: Verdict| {
        if strict && v == Verdict::Caution {
            " (counts as a failure: --strict)"
        } else {
            ""
        }
    };
    match comparison {
        None => format!("skidroute check: {}{}", verdict_span(run.verdict()), strict_note(run.verdict())),
        Some(c) => match c.ranking.first() {
            Some(best) if best.verdict != Verdict::Fail => format!(
                "skidroute comparison: best '{}' {}{}",
                escape(&best.route),
                verdict_span(best.verdict),
                strict_note(best.verdict)
            ),
            _ => format!("skidroute comparison: no alternative passes {}", verdict_span(Verdict::Fail)),
        },
    }
}

/// The HTML document. `plot_svg` is embedded as is (an SVG document from the plot module);
/// `comparison` adds the ranking table above the routes; `strict` says that cautions count as
/// failures (`--strict`), so the headline agrees with the exit code.
pub fn report_html(run: &CheckRun, plot_svg: &str, comparison: Option<&Comparison>, strict: bool) -> String {
    let mut out = String::new();
    let title = if comparison.is_some() { "skidroute comparison" } else { "skidroute check" };
    let _ = writeln!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{title}</title>\
         <style>{STYLE}</style></head><body>"
    );
    let _ = writeln!(out, "<h1>{}</h1>", headline(run, comparison, strict));
    let profile = if run.demo_profile { " (built-in demo profile: invented coefficients)" } else { "" };
    let _ = writeln!(out, "<p>vehicle: {}{profile}</p>", escape(&run.vehicle_name));
    let _ = writeln!(out, "<div class=\"caution-box\"><b>Caution.</b> {}</div>", escape(CAUTION));
    if let Some(c) = comparison {
        ranking_section(&mut out, c);
    }
    // Strip a leading XML declaration so the SVG embeds inline in HTML.
    let svg = plot_svg.trim_start();
    let svg = match svg.strip_prefix("<?xml") {
        Some(rest) => rest.split_once("?>").map_or(svg, |(_, after)| after.trim_start()),
        None => svg,
    };
    let _ = writeln!(out, "<h2>plot</h2>\n<figure>{svg}</figure>");
    for cr in &run.routes {
        route_section(&mut out, &cr.report, &cr.route.warnings);
    }
    let _ = writeln!(out, "<p>Caution: {}</p>\n</body></html>", escape(CAUTION));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup_and_builds_a_document_without_external_resources() {
        assert_eq!(escape("<a href=\"x\">&'"), "&lt;a href=&quot;x&quot;&gt;&amp;&#39;");
        let run = CheckRun { vehicle_name: "v<1>".into(), demo_profile: true, routes: vec![], terrain_map: None };
        let html = report_html(&run, "<?xml version=\"1.0\"?>\n<svg></svg>", None, false);
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(html.contains("<figure><svg></svg></figure>"));
        assert!(html.contains("v&lt;1&gt;"));
        for external in ["http://", "https://", "<script", "<link", "src="] {
            assert!(!html.contains(external), "{external}");
        }
    }
}
