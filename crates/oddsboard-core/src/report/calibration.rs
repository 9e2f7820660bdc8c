//! How well the odds predicted the outcomes: Brier score and a reliability
//! table.

/// Brier score of probability forecasts of a yes/no event: the mean squared
/// difference between the forecast probability `f` and the outcome `o`
/// (1 if it happened, 0 if not), `BS = (1/N) Σ (f − o)²`; 0 is perfect,
/// 0.25 is what always saying 0.5 scores.
///
/// Source: G. W. Brier, "Verification of forecasts expressed in terms of
/// probability", Monthly Weather Review 78(1), 1950, pp. 1–3. Brier's own
/// form sums over both classes (happened, did not), which for a yes/no event
/// is exactly twice this value; [`brier_score_two_class`] gives that form.
pub fn brier_score(forecasts: &[(f64, bool)]) -> Option<f64> {
    if forecasts.is_empty() {
        return None;
    }
    let sum: f64 = forecasts
        .iter()
        .map(|&(f, o)| {
            let d = f - if o { 1.0 } else { 0.0 };
            d * d
        })
        .sum();
    Some(sum / forecasts.len() as f64)
}

/// Brier's 1950 form `P = (1/N) Σ_j Σ_{i=1..r} (f_ij − E_ij)²` with r = 2
/// classes (the event happened / did not).
pub fn brier_score_two_class(forecasts: &[(f64, bool)]) -> Option<f64> {
    if forecasts.is_empty() {
        return None;
    }
    let sum: f64 = forecasts
        .iter()
        .map(|&(f, o)| {
            let e = if o { 1.0 } else { 0.0 };
            (f - e).powi(2) + ((1.0 - f) - (1.0 - e)).powi(2)
        })
        .sum();
    Some(sum / forecasts.len() as f64)
}

/// One bin of a reliability table: forecasts in `[low, high)` (the last bin
/// includes 1).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ReliabilityBin {
    pub low: f64,
    pub high: f64,
    pub count: usize,
    /// Mean forecast in the bin.
    pub mean_forecast: f64,
    /// Share of the bin's events that happened.
    pub observed: f64,
}

/// Reliability table with `bins` equal-width bins over [0, 1]; empty bins
/// are left out. A well-calibrated forecaster has `observed ≈ mean_forecast`
/// in every bin (common practice in forecast verification).
pub fn reliability_table(forecasts: &[(f64, bool)], bins: usize) -> Vec<ReliabilityBin> {
    let bins = bins.max(1);
    let mut acc = vec![(0usize, 0.0f64, 0usize); bins];
    for &(f, o) in forecasts {
        let f = if f.is_finite() {
            f.clamp(0.0, 1.0)
        } else {
            0.0
        };
        let i = ((f * bins as f64) as usize).min(bins - 1);
        acc[i].0 += 1;
        acc[i].1 += f;
        acc[i].2 += usize::from(o);
    }
    acc.iter()
        .enumerate()
        .filter(|(_, a)| a.0 > 0)
        .map(|(i, &(n, sum, hits))| ReliabilityBin {
            low: i as f64 / bins as f64,
            high: (i + 1) as f64 / bins as f64,
            count: n,
            mean_forecast: sum / n as f64,
            observed: hits as f64 / n as f64,
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brier_by_hand() {
        // Hand computation: (0.9−1)² + (0.2−0)² + (0.6−0)² + (1.0−1)²
        // = 0.01 + 0.04 + 0.36 + 0 = 0.41; / 4 = 0.1025.
        let f = [(0.9, true), (0.2, false), (0.6, false), (1.0, true)];
        assert!((brier_score(&f).unwrap() - 0.1025).abs() < 1e-12);
        assert!((brier_score_two_class(&f).unwrap() - 0.205).abs() < 1e-12);
        assert_eq!(brier_score(&[]), None);
    }

    #[test]
    fn reliability_bins() {
        let f = [(0.05, false), (0.95, true), (0.92, false), (1.0, true)];
        let t = reliability_table(&f, 10);
        assert_eq!(t.len(), 2);
        assert_eq!(t[0].count, 1);
        assert_eq!(t[1].count, 3);
        assert!((t[1].observed - 2.0 / 3.0).abs() < 1e-12);
        assert!((t[1].mean_forecast - (0.95 + 0.92 + 1.0) / 3.0).abs() < 1e-12);
    }
}
