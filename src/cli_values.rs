//! Value parsers of the command line's options: each turns one option's text into its
//! value or a one-line message (the argument parser then exits with status 2, before any
//! work). The ranges are those the library's `check()` methods accept.

use std::path::PathBuf;

use crate::detect::CfarKind;
use crate::frontend::Canceller;

/// A probability from 0 to 1.
pub fn parse_probability(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if (0.0..=1.0).contains(&v) => Ok(v),
        _ => Err(format!("{s}: expected a probability from 0 to 1")),
    }
}

/// A share strictly between 0 and 1.
pub fn parse_fraction(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v < 1.0 => Ok(v),
        _ => Err(format!(
            "{s}: expected a share between 0 and 1 (both excluded)"
        )),
    }
}

/// A false-alarm probability strictly between 0 and 0.5.
pub fn parse_pfa(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v < 0.5 => Ok(v),
        _ => Err(format!(
            "{s}: expected a false-alarm probability between 0 and 0.5 (both excluded)"
        )),
    }
}

/// A picture path: only .png is written.
pub fn parse_png_path(s: &str) -> Result<PathBuf, String> {
    let p = PathBuf::from(s);
    crate::report::plot::check_picture_path(&p)?;
    Ok(p)
}

/// Widest velocity half-span accepted, m/s: well past any radar's unambiguous speed (a
/// span wider than the axis shows the whole axis).
pub const MAX_VELOCITY_SPAN_MPS: f64 = 1e4;

/// A velocity half-span, m/s: above 0, at most [`MAX_VELOCITY_SPAN_MPS`].
pub fn parse_velocity_span(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v <= MAX_VELOCITY_SPAN_MPS => Ok(v),
        _ => Err(format!(
            "{s}: expected a speed in m/s above 0 and at most 10000"
        )),
    }
}

/// Highest cadence axis top accepted, Hz: past any chirp rate's frame rate (above the
/// axis' end shows the whole axis).
pub const MAX_CADENCE_HZ: f64 = 1e6;

/// A cadence axis top, Hz: above 0, at most [`MAX_CADENCE_HZ`].
pub fn parse_cadence_max(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v <= MAX_CADENCE_HZ => Ok(v),
        _ => Err(format!(
            "{s}: expected a cadence in Hz above 0 and at most 1000000"
        )),
    }
}

/// A CPI length: 0 (automatic) or a length the CFAR window fits in.
pub fn parse_cpi(s: &str) -> Result<usize, String> {
    let min = crate::pipeline::DetectSettings::default().min_cpi_chirps();
    let max = crate::pipeline::settings::MAX_CPI_CHIRPS;
    match s.parse::<usize>() {
        Ok(v) if v == 0 || (min..=max).contains(&v) => Ok(v),
        _ => Err(format!(
            "{s}: expected 0 (automatic) or {min} to {max} chirps (the CFAR window spans {min} Doppler bins)"
        )),
    }
}

/// A clutter canceller: none, two-pulse or three-pulse.
pub fn parse_canceller(s: &str) -> Result<Canceller, String> {
    s.parse::<Canceller>().map_err(|e| e.to_string())
}

/// `on` or `off`.
pub fn parse_on_off(s: &str) -> Result<bool, String> {
    match s {
        "on" => Ok(true),
        "off" => Ok(false),
        _ => Err(format!("{s:?}: expected on or off")),
    }
}

/// A CFAR kind: ca or os.
pub fn parse_cfar(s: &str) -> Result<CfarKind, String> {
    s.parse::<CfarKind>().map_err(|e| e.to_string())
}

/// A usage error of the argument parser as one line: its message with the usage and the
/// "try --help" lines left out and the rest joined.
pub fn one_line_usage_error(text: &str) -> String {
    let parts: Vec<&str> = text
        .lines()
        .map(str::trim)
        .take_while(|l| !l.starts_with("Usage:"))
        .filter(|l| !l.is_empty() && !l.starts_with("For more information"))
        .collect();
    let joined = parts.join(" ");
    let msg = joined.strip_prefix("error: ").unwrap_or(&joined);
    format!("{msg} (see --help)")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_are_enforced_at_their_ends() {
        assert_eq!(parse_probability("1"), Ok(1.0));
        assert!(parse_probability("1.01").is_err());
        assert!(parse_fraction("0").is_err() && parse_fraction("1").is_err());
        assert!(parse_pfa("0.5").is_err());
        assert_eq!(parse_pfa("1e-6"), Ok(1e-6));
        assert!(parse_velocity_span("0").is_err());
        assert!(parse_cadence_max("1000001").is_err());
        assert_eq!(parse_cpi("0"), Ok(0));
        assert!(parse_cpi("3").is_err());
        assert_eq!(parse_on_off("off"), Ok(false));
        assert!(parse_png_path("x.jpg").is_err());
    }

    #[test]
    fn usage_error_is_one_line() {
        let t = "error: invalid value 'x' for '--pfa <PFA>'\n\nUsage: rotorsift detect\n\nFor more information, try '--help'.\n";
        assert_eq!(
            one_line_usage_error(t),
            "invalid value 'x' for '--pfa <PFA>' (see --help)"
        );
    }
}
