//! Folding arithmetic of sampling and the ideal dynamic range of an ADC.

/// Where energy at f lands after sampling at fs: |f − round(f/fs)·fs|.
///
/// The result lies in `[0, fs/2]`. `fs_hz` must be positive and finite.
pub fn fold(f_hz: f64, fs_hz: f64) -> f64 {
    (f_hz - (f_hz / fs_hz).round() * fs_hz).abs()
}

/// Lowest frequency that folds into [0, band]: fs − band.
pub fn lowest_folding_frequency(fs_hz: f64, band_hz: f64) -> f64 {
    fs_hz - band_hz
}

/// Whether energy at `f_hz` lands inside `[0, band_hz]` after sampling at `fs_hz`.
pub fn folds_into_band(f_hz: f64, fs_hz: f64, band_hz: f64) -> bool {
    fold(f_hz, fs_hz) <= band_hz
}

/// All frequencies in `(0, max_hz]` that land where `f_hz` lands after sampling at
/// `fs_hz` (the images `k·fs ± alias`), in ascending order, `f_hz`'s own alias included.
///
/// Useful for drawing the images of a band; `fs_hz` must be positive and finite.
pub fn images(f_hz: f64, fs_hz: f64, max_hz: f64) -> Vec<f64> {
    let alias = fold(f_hz, fs_hz);
    let mut out = Vec::new();
    let mut k = 0.0_f64;
    while k * fs_hz - alias <= max_hz {
        for candidate in [k * fs_hz - alias, k * fs_hz + alias] {
            if candidate > 0.0
                && candidate <= max_hz
                && out.last().is_none_or(|&last| candidate > last)
            {
                out.push(candidate);
            }
        }
        k += 1.0;
    }
    out
}

/// Ideal ADC dynamic range 6.02·N + 1.76 dB.
///
/// The signal-to-quantisation-noise ratio of a full-scale sine on an ideal N-bit
/// converter, in its customary rounded form.
pub fn ideal_dynamic_range_db(bits: u32) -> f64 {
    6.02 * f64::from(bits) + 1.76
}
