//! The audit page: `DIR/index.html`, one self-contained HTML file (no scripts, no outside
//! resources) listing the doubtful tracks (and every hovering rotorcraft) with their
//! physical estimates, the model's top features, their pictures (`DIR/img/*.png`) and the
//! `rotorsift plot` command lines that redraw them.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write;

use super::plot::PictureKind;

/// The reason given to a hovering track labelled rotorcraft.
pub const HOVERING_ROTORCRAFT: &str = "hovering rotorcraft";

/// The selection rules in force, as the page's header states them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AuditRules {
    /// Tracks whose confidence is below this are listed.
    pub low_confidence: f64,
    /// Tracks whose bird and rotorcraft probabilities are both at least this are listed.
    pub bird_rotor_doubt: f64,
    /// Every track predicted this class is listed instead of the doubtful ones.
    pub predicted: Option<String>,
    /// This one track only: (recording name, track id).
    pub track: Option<(String, usize)>,
}

/// One listed track.
#[derive(Debug, Clone)]
pub struct AuditEntry {
    pub recording: String,
    /// The recording's base name (no `.sigmf-meta`): `RECORDING` of `--track RECORDING:ID`.
    pub name: String,
    /// `core:datetime` of the recording, when it has one.
    pub datetime: Option<String>,
    /// Channel the analysis read (for the redraw command lines).
    pub channel: usize,
    pub track_id: usize,
    pub start_s: f64,
    pub end_s: f64,
    pub range_m: f64,
    pub radial_velocity_mps: f64,
    pub snr_db: f64,
    pub hovering: bool,
    pub blade_flash_hz: Option<f64>,
    pub tip_speed_mps: Option<f64>,
    /// True when the tip speed sits at the unambiguous speed (a lower bound).
    pub tip_speed_is_bound: bool,
    /// Harmonic-sum strength of the blade flashes, dB (blanked with the other rotor
    /// figures for a track not taken to show a rotor).
    pub blade_flash_strength_db: Option<f64>,
    /// Wingbeat-band cadence (`cadence_low_hz`) and its strength, dB.
    pub wingbeat_hz: Option<f64>,
    pub wingbeat_strength_db: Option<f64>,
    /// Share of the track's CPIs found only inside the canceller notch.
    pub notch_share: f64,
    /// The model's most important features with this track's values: (name, unit, value).
    pub top_features: Vec<(&'static str, &'static str, f64)>,
    /// The matched annotation's label and target id, if any.
    pub truth: Option<String>,
    pub target_id: Option<String>,
    /// The predicted class (`unknown` under `--min-confidence`), its confidence and the
    /// class probabilities.
    pub label: String,
    pub confidence: f64,
    pub probabilities: BTreeMap<String, f64>,
    /// Whether the track is taken to show a rotor (the pipeline's rule: no rotor figures
    /// for bird or clutter); the rotor fields are already blanked when not.
    pub shows_rotor: bool,
    pub reasons: Vec<String>,
    /// Picture files, relative to the audit directory, with their kind.
    pub pictures: Vec<(PictureKind, String)>,
    /// Doubt score: misclassified first, then by lowest confidence.
    pub score: f64,
}

/// The audit's result.
#[derive(Debug, Clone, Default)]
pub struct Audit {
    pub model: String,
    pub recordings: usize,
    pub tracks: usize,
    pub matched: usize,
    /// Track-level counts (true label, predicted) over matched tracks.
    pub confusion: BTreeMap<(String, String), usize>,
    pub entries: Vec<AuditEntry>,
    /// The selection rules in force, for the page's header.
    pub rules: AuditRules,
}

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

const STYLE: &str = "body{font-family:sans-serif;margin:1.5em auto;max-width:1020px;color:#123;line-height:1.35}\
table{border-collapse:collapse;margin:.3em 0}td,th{border:1px solid #9ab;padding:3px 8px;text-align:right}\
th{background:#dfe8ee;font-weight:normal}td.l,th.l{text-align:left}\
.track{margin:1.4em 0;padding:.6em .9em;border:1px solid #9ab;border-top:4px solid #246;border-radius:4px}\
.track h3{margin:.2em 0}.why{color:#a30;font-weight:bold}.when{color:#456}\
.pics img{width:480px;max-width:100%;margin:2px;border:1px solid #ccd}.note{color:#456;font-size:90%}\
pre{background:#f3f6f8;padding:.4em;overflow-x:auto;font-size:85%}dt{font-weight:bold}dd{margin:0 0 .4em 1.2em}";

fn opt(v: Option<f64>, dec: usize) -> String {
    v.map(|x| format!("{x:.dec$}"))
        .unwrap_or_else(|| "-".into())
}

/// A word for the shell: as it is when it holds only safe characters, else in single
/// quotes.
fn shell_word(s: &str) -> String {
    if !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_./:=+,@".contains(c))
    {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', "'\\''"))
    }
}

/// The command line that redraws one picture of a listed track with `rotorsift plot`.
/// Only the options every picture needs; any other `plot` option can be added to it.
pub fn plot_command(e: &AuditEntry, kind: PictureKind) -> String {
    let mut c = format!(
        "rotorsift plot {} --kind {} --track {} --out {}",
        shell_word(&e.recording),
        kind.name(),
        e.track_id,
        shell_word(&format!("{}-t{}-{}.png", e.name, e.track_id, kind.name()))
    );
    if e.channel != 0 {
        c.push_str(&format!(" --channel {}", e.channel));
    }
    c
}

/// Why tracks are listed, as the page's header says it.
fn rules(a: &Audit) -> String {
    let p = &a.rules;
    let mut h = String::from("<dl>");
    if let Some((rec, id)) = &p.track {
        let _ = write!(
            h,
            "<dt>asked for</dt><dd>the one track named with <code>--track {}:{id}</code>.</dd>",
            escape(rec)
        );
    } else if let Some(class) = &p.predicted {
        let _ = write!(
            h,
            "<dt>predicted {c}</dt><dd>every track the model labels <b>{c}</b> (<code>--predicted {c}</code>); the other reasons below are shown where they also hold.</dd>",
            c = escape(class)
        );
    }
    let _ = write!(
        h,
        "<dt>misclassified</dt><dd>the track matches an annotation whose label differs from the predicted class.</dd>\
<dt>low confidence</dt><dd>the largest class probability is under {:.2} (<code>--low-confidence</code>).</dd>\
<dt>bird or rotorcraft?</dt><dd>the bird and rotorcraft probabilities are both at least {:.2} (<code>--doubt</code>).</dd>\
<dt>{HOVERING_ROTORCRAFT}</dt><dd>labelled rotorcraft with a body radial speed under 0.5 m/s: every hovering drone is listed.</dd></dl>",
        p.low_confidence, p.bird_rotor_doubt
    );
    if p.track.is_some() || p.predicted.is_some() {
        h.push_str("<p class=\"note\">With <code>--track</code> or <code>--predicted</code> only those tracks are listed; the reasons above are shown on them where they hold.</p>");
    }
    h
}

/// The page.
pub fn to_html(a: &Audit, tool_version: &str) -> String {
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
<title>rotorsift audit</title><style>{STYLE}</style></head><body>\n\
<h1>rotorsift audit</h1>\n<p>Model <b>{}</b>, rotorsift {}. {} recording{}, {} track{}, {} matched to a label; \
<b>{} listed</b>. Decision support only: look at the pictures before acting on any label.</p>\n\
<h2>Why a track is listed</h2>\n{}\n\
<p class=\"note\">Velocities are radial, positive = receding (moving away), negative = approaching. \
SNR: mean detection SNR over the track's CPIs (strongest range-Doppler cell over its CFAR noise estimate). \
Rotor figures (flash rate, tip speed, flash strength, blade length) are left out for tracks labelled bird or clutter, as in <code>rotorsift classify</code>; \
a tip speed marked &ge; sits at the radar's unambiguous speed and is a lower bound. \
Each track is one element whose <code>data-track</code> attribute reads RECORDING:ID (the recording's name, and the id <code>detect</code> and <code>classify</code> print).</p>\n",
        escape(&a.model),
        escape(tool_version),
        a.recordings,
        if a.recordings == 1 { "" } else { "s" },
        a.tracks,
        if a.tracks == 1 { "" } else { "s" },
        a.matched,
        a.entries.len(),
        rules(a),
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
    h.push_str("<h2>Listed tracks, most doubtful first</h2>\n");
    if a.entries.is_empty() {
        h.push_str("<p>None.</p>\n");
    }
    for e in &a.entries {
        entry_html(&mut h, e);
    }
    h.push_str("</body></html>\n");
    h
}

fn entry_html(h: &mut String, e: &AuditEntry) {
    let probs: Vec<String> = e
        .probabilities
        .iter()
        .map(|(k, v)| format!("{} {:.2}", escape(k), v))
        .collect();
    let key = format!("{}:{}", e.name, e.track_id);
    let _ = write!(
        h,
        "<div class=\"track\" data-track=\"{k}\" id=\"{k}\"><h3>{} &middot; track {}</h3>\n\
<p class=\"why\">{}</p>\n<p class=\"when\">{}{}</p>\n",
        escape(&e.name),
        e.track_id,
        escape(&e.reasons.join("; ")),
        escape(&e.recording),
        match &e.datetime {
            Some(d) => format!(" &middot; recorded {}", escape(d)),
            None => String::new(),
        },
        k = escape(&key),
    );
    let _ = write!(
        h,
        "<table><tr><th>start s</th><th>end s</th><th>range m</th><th>velocity m/s</th><th>SNR dB</th>\
<th>hovering</th><th class=\"l\">label</th><th class=\"l\">predicted</th><th>confidence</th>\
<th class=\"l\">probabilities</th></tr>\n<tr><td>{:.2}</td><td>{:.2}</td><td>{:.1}</td><td>{:+.2}</td><td>{:.1}</td>\
<td>{}</td><td class=\"l\">{}</td><td class=\"l\">{}</td><td>{:.2}</td><td class=\"l\">{}</td></tr></table>\n",
        e.start_s,
        e.end_s,
        e.range_m,
        e.radial_velocity_mps,
        e.snr_db,
        if !e.shows_rotor {
            "-"
        } else if e.hovering {
            "yes"
        } else {
            "no"
        },
        match (&e.truth, &e.target_id) {
            (Some(l), Some(id)) => format!("{} ({})", escape(l), escape(id)),
            (Some(l), None) => escape(l),
            _ => "-".into(),
        },
        escape(&e.label),
        e.confidence,
        probs.join(", ")
    );
    let tip = match e.tip_speed_mps {
        Some(v) if e.tip_speed_is_bound => format!("&ge;{v:.1}"),
        other => opt(other, 1),
    };
    let _ = write!(
        h,
        "<table><tr><th>blade-flash rate Hz</th><th>tip speed m/s</th><th>flash strength dB</th>\
<th>wingbeat cadence Hz</th><th>wingbeat strength dB</th><th>notch share</th></tr>\n\
<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{:.2}</td></tr></table>\n",
        opt(e.blade_flash_hz, 1),
        tip,
        opt(e.blade_flash_strength_db, 1),
        opt(e.wingbeat_hz, 1),
        opt(e.wingbeat_strength_db, 1),
        e.notch_share,
    );
    if !e.top_features.is_empty() {
        h.push_str("<table><tr><th class=\"l\">the model's top features</th>");
        for (name, unit, _) in &e.top_features {
            let _ = write!(h, "<th>{} ({})</th>", escape(name), escape(unit));
        }
        h.push_str("</tr>\n<tr><td class=\"l\">this track</td>");
        for (_, _, v) in &e.top_features {
            let _ = write!(h, "<td>{v:.3}</td>");
        }
        h.push_str("</tr></table>\n");
    }
    if e.pictures.is_empty() {
        h.push_str("<p class=\"note\">No pictures (over the picture limit, or the track is too short).</p>\n");
    } else {
        h.push_str("<div class=\"pics\">");
        for (kind, file) in &e.pictures {
            let _ = write!(
                h,
                "<a href=\"{f}\"><img src=\"{f}\" alt=\"{k} of {key}\"></a>",
                f = escape(file),
                k = kind.name(),
                key = escape(&key),
            );
        }
        h.push_str("</div>\n<p class=\"note\">Redraw a picture (with the detection options of the model; the defaults for the built-in model):</p>\n<pre>");
        for (kind, _) in &e.pictures {
            let _ = writeln!(h, "{}", escape(&plot_command(e, *kind)));
        }
        h.push_str("</pre>\n");
    }
    h.push_str("</div>\n");
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
