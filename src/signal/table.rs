//! Attenuation given as a datasheet table of points.

/// The `table` response (docs/model.md): points (f, dB) rising in f; linear in dB over log10(f) between points;
/// 0 below the first point; last value held above the last.
///
/// An empty table attenuates nothing. Points are expected with positive, rising
/// frequencies; a segment that does not rise (or starts at a frequency ≤ 0) is taken as
/// a step to its right-hand value, so the result always stays within the table's values.
pub fn table_attenuation_db(points: &[(f64, f64)], f_hz: f64) -> f64 {
    let Some(&(first_f, _)) = points.first() else {
        return 0.0;
    };
    // Below the first point (or NaN): nothing is attenuated.
    if f_hz.partial_cmp(&first_f).is_none_or(|o| o.is_lt()) {
        return 0.0;
    }
    // Index of the last point at or below f.
    let i = points.partition_point(|&(pf, _)| pf <= f_hz).max(1) - 1;
    let (f0, a0) = points[i];
    let Some(&(f1, a1)) = points.get(i + 1) else {
        return a0;
    };
    if f1 <= f0 || f0 <= 0.0 {
        return a1;
    }
    let t = (f_hz / f0).ln() / (f1 / f0).ln();
    a0 + (a1 - a0) * t.clamp(0.0, 1.0)
}
