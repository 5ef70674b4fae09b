//! The feature vector's layout: every feature's name, unit and meaning, in order. The
//! README's feature table is generated from this list (`rotorsift features --list`).

/// One feature: name (CSV column), unit, meaning.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FeatureInfo {
    pub name: &'static str,
    pub unit: &'static str,
    pub meaning: &'static str,
}

macro_rules! features {
    ($( $id:ident = $name:literal, $unit:literal, $meaning:literal; )*) => {
        /// Index of each feature in [`FEATURES`].
        #[allow(non_camel_case_types, clippy::upper_case_acronyms)]
        #[derive(Debug, Clone, Copy, PartialEq, Eq)]
        #[repr(usize)]
        pub enum FeatureId { $( $id, )* }
        /// Every feature, in vector order.
        pub const FEATURES: &[FeatureInfo] = &[
            $( FeatureInfo { name: $name, unit: $unit, meaning: $meaning }, )*
        ];
    };
}

features! {
    BodySpeed = "body_speed_mps", "m/s", "median |radial velocity| of the track's body line";
    BodySpeedStd = "body_speed_std_mps", "m/s", "spread (std) of the body's radial velocity over the track";
    RangeRate = "range_rate_mps", "m/s", "slope of range over time (least squares), signed, positive = receding";
    RangeExtent = "range_extent_m", "m", "max minus min range over the track";
    Duration = "duration_s", "s", "track duration";
    Snr = "snr_db", "dB", "mean detection SNR over the track's CPIs (after range FFT and Doppler integration)";
    SnrStd = "snr_std_db", "dB", "spread (std) of the detection SNR over the track's CPIs";
    AmpStd = "amp_std_db", "dB", "spread (std) of the slow-time amplitude envelope (5 ms smoothing), clutter removed";
    AmpCadenceHz = "amp_cadence_hz", "Hz", "strongest periodicity of the amplitude envelope between 0.5 and 30 Hz";
    AmpCadenceStrength = "amp_cadence_strength_db", "dB", "that peak over the median of the envelope spectrum in the band";
    MdExtent = "md_extent_mps", "m/s", "largest |velocity offset| from the body where the smoothed long-window Doppler spectrum stands out of the reference gate's noise (5 standard errors, at least 0.5 dB) and lies within 15 dB of the blade level";
    MdExtent95 = "md_extent95_mps", "m/s", "|velocity offset| from the body holding 95% of the excess spectral energy";
    OutsideShare = "outside_share", "1", "share of excess spectral energy more than 0.5 m/s (and 2 bins) from the body line";
    Entropy = "spectral_entropy", "1", "entropy of the mean excess Doppler spectrum, normalised to 0..1";
    Symmetry = "spectral_symmetry", "1", "(E+ - E-)/(E+ + E-) of excess energy above and below the body line";
    Cep1 = "cepstrum_1", "1", "real cepstrum coefficient 1 of the mean log Doppler spectrum";
    Cep2 = "cepstrum_2", "1", "real cepstrum coefficient 2";
    Cep3 = "cepstrum_3", "1", "real cepstrum coefficient 3";
    Cep4 = "cepstrum_4", "1", "real cepstrum coefficient 4";
    CepPeakHz = "cepstral_line_hz", "Hz", "Doppler line spacing from the cepstral peak (1/quefrency), 20 Hz to PRF/4";
    CepPeakStrength = "cepstral_peak_strength", "1", "cepstral peak over the median cepstral magnitude in that quefrency band";
    FlashHz = "blade_flash_hz", "Hz", "blade-flash rate: fundamental of the periodic flashes of micro-Doppler power (harmonic sum)";
    FlashStrength = "blade_flash_strength_db", "dB", "harmonic-sum peak over its median across the flash band";
    TipSpeed = "tip_speed_mps", "m/s", "blade-tip speed: the micro-Doppler extent (max |v - v_body|), limited by the unambiguous speed";
    BladeLength = "blade_length_m", "m", "tip speed / (2 pi f_rot), f_rot = flash rate / 2 (two blades assumed)";
    CadenceLowHz = "cadence_low_hz", "Hz", "cadence-velocity diagram: strongest cadence between 0.5 and 30 Hz (wingbeat band)";
    CadenceLowStrength = "cadence_low_strength_db", "dB", "that peak over the median of the summed cadence spectrum";
    CadenceHighHz = "cadence_high_hz", "Hz", "cadence-velocity diagram: strongest cadence above 30 Hz (rotor band)";
    CadenceHighStrength = "cadence_high_strength_db", "dB", "that peak over the median of the summed cadence spectrum";
    NotchShare = "notch_share", "1", "share of the track's CPIs found only by the micro-Doppler detector (body in the canceller notch)";
    FastBandSnr = "fast_band_snr_db", "dB", "power more than 20 m/s from the body line (blade speeds), over the noise of a reference gate, referred to a 256-chirp CPI (floor -5 dB)";
    SlowBandSnr = "slow_band_snr_db", "dB", "the same for 2-20 m/s from the body line (wings, limbs, foliage)";
    FastBandEvidence = "fast_band_evidence_db", "dB", "the fast band's excess power integrated over the whole analysed track, over the standard deviation of that sum in noise alone (energy-detector deflection; floor -10 dB): grows with track length";
    SlowBandEvidence = "slow_band_evidence_db", "dB", "the same for the slow band (2-20 m/s): wingbeats and limbs integrated over the track";
    ExtentShare = "md_extent_share", "1", "md_extent_mps over the unambiguous speed lambda / (4T): 1 when the spread fills the unambiguous span (the blade tips wrap)";
    FastSlowRatio = "fast_slow_ratio_db", "dB", "fast_band_snr_db minus slow_band_snr_db: how the power away from the body splits between blade speeds and wing or limb speeds, whatever the SNR";
    OuterShare = "outer_excess_share", "1", "excess power per bin in the outer half of the unambiguous span (offsets beyond half of lambda / (4T)) over that of the inner half, body and clutter lines left out: near 1 when wrapped blade energy covers the span evenly, near 0 when the spread stays near the body";
}

/// Features whose value depends on the radar that measured them, not only on the target:
/// SNR-referred powers and strengths (the radar's sensitivity and range), Doppler extents
/// capped by the unambiguous speed lambda / (4T) (a tip of 60 m/s reads 15 m/s on a radar
/// whose unambiguous speed is 15 m/s), and shapes of the Doppler spectrum that depend on
/// the number of bins and where the spread wraps (entropy, cepstral coefficients). The
/// rest (speeds of the body, cadences and flash rates in Hz, amplitude fluctuation,
/// symmetry, durations) mean the same on every radar that resolves them.
pub const RADAR_DEPENDENT: &[&str] = &[
    "snr_db",
    "amp_cadence_strength_db",
    "md_extent_mps",
    "md_extent95_mps",
    "outside_share",
    "spectral_entropy",
    "cepstrum_1",
    "cepstrum_2",
    "cepstrum_3",
    "cepstrum_4",
    "cepstral_peak_strength",
    "blade_flash_strength_db",
    "tip_speed_mps",
    "blade_length_m",
    "cadence_low_strength_db",
    "cadence_high_strength_db",
    "fast_band_snr_db",
    "slow_band_snr_db",
    "fast_band_evidence_db",
    "slow_band_evidence_db",
    "md_extent_share",
    "outer_excess_share",
    "fast_slow_ratio_db",
];

/// Whether feature `name` means the same on every radar (see [`RADAR_DEPENDENT`]).
pub fn radar_independent(name: &str) -> bool {
    !RADAR_DEPENDENT.contains(&name)
}

/// Number of features.
pub fn count() -> usize {
    FEATURES.len()
}

/// Feature names in order.
pub fn names() -> Vec<String> {
    FEATURES.iter().map(|f| f.name.to_string()).collect()
}

/// The feature table in Markdown (for the README); a `|` inside a meaning (an absolute
/// value) is escaped so it does not end the table cell.
pub fn markdown_table() -> String {
    let mut s = String::from(
        "| feature | unit | radar-independent | meaning |\n| --- | --- | --- | --- |\n",
    );
    for f in FEATURES {
        s.push_str(&format!(
            "| `{}` | {} | {} | {} |\n",
            f.name,
            f.unit,
            if radar_independent(f.name) {
                "yes"
            } else {
                "no"
            },
            f.meaning.replace('|', "\\|")
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every radar-dependent name is a feature (a typo would silently mark nothing).
    #[test]
    fn radar_dependent_names_exist() {
        for n in RADAR_DEPENDENT {
            assert!(FEATURES.iter().any(|f| f.name == *n), "{n}");
        }
        assert!(radar_independent("blade_flash_hz") && !radar_independent("tip_speed_mps"));
    }
}
