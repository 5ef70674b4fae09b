//! The audit page: `DIR/index.html`, one self-contained HTML file (no scripts, no outside
//! resources) listing the doubtful tracks with their pictures (`DIR/img/*.png`).

use std::collections::BTreeSet;
use std::fmt::Write;

use crate::pipeline::audit::Audit;

/// Escapes text for HTML.
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            _ => o.push(c),
        }
    }
    o
}

const STYLE: &str = "body{font-family:sans-serif;margin:1.5em;color:#123}\
table{border-collapse:collapse}td,th{border:1px solid #9ab;padding:3px 8px;text-align:right}\
th{background:#dfe8ee}td.l{text-align:left}.track{margin:1.2em 0;padding:.6em;border-top:2px solid #246}\
.why{color:#a30}.pics img{width:480px;margin:2px}.note{color:#456;font-size:90%}";

fn opt(v: Option<f64>, dec: usize) -> String {
    v.map(|x| format!("{x:.dec$}"))
        .unwrap_or_else(|| "-".into())
}

/// The page.
pub fn to_html(a: &Audit, tool_version: &str) -> String {
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
<title>rotorsift audit</title><style>{STYLE}</style></head><body>\n\
<h1>rotorsift audit</h1>\n<p>Model <b>{}</b>, rotorsift {}. {} recordings, {} tracks, {} matched to a label. \
{} tracks listed: misclassified against their label, low confidence, or doubtful between bird \
and rotorcraft. Decision support only: look at the pictures before acting on any label.</p>\n",
        escape(&a.model),
        escape(tool_version),
        a.recordings,
        a.tracks,
        a.matched,
        a.entries.len()
    );
    // Track-level confusion over matched tracks.
    let classes: BTreeSet<&String> = a.confusion.keys().flat_map(|(t, p)| [t, p]).collect();
    if !classes.is_empty() {
        h.push_str(
            "<h2>Matched tracks (rows labelled, columns predicted)</h2>\n<table><tr><th></th>",
        );
        for c in &classes {
            let _ = write!(h, "<th>{}</th>", escape(c));
        }
        h.push_str("</tr>\n");
        for t in &classes {
            let _ = write!(h, "<tr><th>{}</th>", escape(t));
            for p in &classes {
                let n = a
                    .confusion
                    .get(&((*t).clone(), (*p).clone()))
                    .copied()
                    .unwrap_or(0);
                let _ = write!(h, "<td>{n}</td>");
            }
            h.push_str("</tr>\n");
        }
        h.push_str("</table>\n<p class=\"note\">Track level: each track counts once; <code>rotorsift evaluate</code> scores targets (annotations) instead.</p>\n");
    }
    h.push_str("<h2>Doubtful tracks, most doubtful first</h2>\n");
    if a.entries.is_empty() {
        h.push_str("<p>None.</p>\n");
    }
    for e in &a.entries {
        let probs: Vec<String> = e
            .prediction
            .probabilities
            .iter()
            .map(|(k, v)| format!("{} {:.2}", escape(k), v))
            .collect();
        let _ = write!(
            h,
            "<div class=\"track\"><h3>{} &middot; track {}</h3>\n<p class=\"why\">{}</p>\n\
<table><tr><th>start s</th><th>end s</th><th>range m</th><th>velocity m/s</th><th>SNR dB</th>\
<th>hovering</th><th>flash Hz</th><th>tip m/s</th><th>label</th><th>predicted</th><th>confidence</th>\
<th>probabilities</th></tr>\n<tr><td>{:.2}</td><td>{:.2}</td><td>{:.1}</td><td>{:+.2}</td><td>{:.1}</td>\
<td>{}</td><td>{}</td><td>{}</td><td class=\"l\">{}</td><td class=\"l\">{}</td><td>{:.2}</td><td class=\"l\">{}</td></tr></table>\n",
            escape(&e.recording),
            e.track_id,
            escape(&e.reasons.join("; ")),
            e.start_s,
            e.end_s,
            e.range_m,
            e.radial_velocity_mps,
            e.snr_db,
            if e.hovering { "yes" } else { "no" },
            opt(e.blade_flash_hz, 0),
            opt(e.tip_speed_mps, 1),
            match (&e.truth, &e.target_id) {
                (Some(l), Some(id)) => format!("{} ({})", escape(l), escape(id)),
                (Some(l), None) => escape(l),
                _ => "-".into(),
            },
            escape(&e.prediction.label),
            e.prediction.confidence,
            probs.join(", ")
        );
        if e.pictures.is_empty() {
            h.push_str("<p class=\"note\">No pictures (over the picture limit, or the track is too short).</p>\n");
        } else {
            h.push_str("<div class=\"pics\">");
            for (kind, file) in &e.pictures {
                let _ = write!(
                    h,
                    "<a href=\"{f}\"><img src=\"{f}\" alt=\"{k}\"></a>",
                    f = escape(file),
                    k = kind.name()
                );
            }
            h.push_str("</div>\n");
        }
        h.push_str("</div>\n");
    }
    h.push_str("</body></html>\n");
    h
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup() {
        assert_eq!(
            escape("<a href=\"x\">&'"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;"
        );
    }

    #[test]
    fn empty_audit_says_none() {
        let a = Audit {
            model: "built-in".into(),
            ..Default::default()
        };
        let h = to_html(&a, "0.1.0");
        assert!(h.contains("<p>None.</p>") && h.ends_with("</html>\n"));
    }
}
