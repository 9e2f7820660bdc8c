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
    /// Events that happened in the bin.
    pub happened: usize,
    /// Wilson score interval (95 %) of the observed share.
    pub observed_low: f64,
    pub observed_high: f64,
    /// Fewer than [`THIN_BIN`] forecasts: the share says little.
    pub thin: bool,
}

/// A bin with fewer forecasts than this is flagged thin: its 95 % Wilson
/// interval is then wider than about ±0.25 whatever the share.
pub const THIN_BIN: usize = 10;

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
        .map(|(i, &(n, sum, hits))| {
            let (lo, hi) = crate::odds::simulate::wilson_interval(hits as u64, n as u64, 1.959_964);
            ReliabilityBin {
                low: i as f64 / bins as f64,
                high: (i + 1) as f64 / bins as f64,
                count: n,
                mean_forecast: sum / n as f64,
                observed: hits as f64 / n as f64,
                happened: hits,
                observed_low: lo,
                observed_high: hi,
                thin: n < THIN_BIN,
            }
        })
        .collect()
}

/// Murphy's decomposition of the Brier score over the bins of
/// [`reliability_table`] (A. H. Murphy, "A new vector partition of the
/// probability score", J. Appl. Meteor. 12, 1973):
/// `BS = reliability − resolution + uncertainty + within`, with
/// reliability `(1/N) Σ_k n_k (f̄_k − ō_k)²`, resolution
/// `(1/N) Σ_k n_k (ō_k − ō)²`, uncertainty `ō(1 − ō)`; `within` is the
/// part due to forecasts differing inside a bin,
/// `(1/N) Σ_k Σ_{i∈k} [(f_i − f̄_k)² − 2(f_i − f̄_k)·o_i]` (Stephenson,
/// Coelho and Jolliffe, Wea. Forecasting 23, 2008), exactly 0 when every
/// forecast of a bin is the same. So the identity is exact in all cases.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Murphy {
    pub brier: f64,
    pub reliability: f64,
    pub resolution: f64,
    pub uncertainty: f64,
    pub within_bin: f64,
    /// Base rate ō.
    pub base_rate: f64,
    pub n: usize,
}

/// See [`Murphy`]; `None` without forecasts.
pub fn murphy(forecasts: &[(f64, bool)], bins: usize) -> Option<Murphy> {
    let n = forecasts.len();
    if n == 0 {
        return None;
    }
    let bins = bins.max(1);
    let nf = n as f64;
    let clamp = |f: f64| {
        if f.is_finite() {
            f.clamp(0.0, 1.0)
        } else {
            0.0
        }
    };
    let bin_of = |f: f64| ((clamp(f) * bins as f64) as usize).min(bins - 1);
    let base = forecasts.iter().filter(|x| x.1).count() as f64 / nf;
    let (mut rel, mut res, mut within) = (0.0, 0.0, 0.0);
    for b in reliability_table(forecasts, bins) {
        let k = bin_of(b.low + 0.5 / bins as f64);
        let nk = b.count as f64;
        rel += nk * (b.mean_forecast - b.observed).powi(2);
        res += nk * (b.observed - base).powi(2);
        for &(f, o) in forecasts.iter().filter(|x| bin_of(x.0) == k) {
            let d = clamp(f) - b.mean_forecast;
            within += d * d - 2.0 * d * if o { 1.0 } else { 0.0 };
        }
    }
    let clamped: Vec<(f64, bool)> = forecasts.iter().map(|&(f, o)| (clamp(f), o)).collect();
    Some(Murphy {
        brier: brier_score(&clamped)?,
        reliability: rel / nf,
        resolution: res / nf,
        uncertainty: base * (1.0 - base),
        within_bin: within / nf,
        base_rate: base,
        n,
    })
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
        assert!(t[1].thin && t[1].happened == 2);
        // Wilson 95 % for 2 of 3, by hand: centre (2 + 1.92)/(3 + 3.84) =
        // 0.5731, half-width 1.96·√(0.6667·0.3333/3 + 0.9604/9)/2.2805 = 0.3654.
        assert!((t[1].observed_low - 0.2077).abs() < 5e-4, "{:?}", t[1]);
        assert!((t[1].observed_high - 0.9385).abs() < 5e-4, "{:?}", t[1]);
    }

    /// Murphy 1973 on a hand-checked example of binned forecasts (every
    /// forecast of a bin the same, so `within` is 0): 4 at 0.2 (1 happened),
    /// 6 at 0.7 (4 happened), 10 bins. Base rate 5/10 = 0.5.
    /// BS by hand: [3·0.04 + 1·0.64 + 4·0.09 + 2·0.49]/10 = 2.1/10 = 0.21.
    /// Reliability: [4·(0.2 − 0.25)² + 6·(0.7 − 2/3)²]/10
    ///   = [0.01 + 0.006667]/10 = 0.0016667.
    /// Resolution: [4·(0.25 − 0.5)² + 6·(2/3 − 0.5)²]/10
    ///   = [0.25 + 0.166667]/10 = 0.0416667.
    /// Uncertainty: 0.25. 0.0016667 − 0.0416667 + 0.25 = 0.21.
    #[test]
    fn murphy_identity_by_hand() {
        let mut f = vec![(0.2, true), (0.2, false), (0.2, false), (0.2, false)];
        f.extend([(0.7, true); 4]);
        f.extend([(0.7, false); 2]);
        let m = murphy(&f, 10).unwrap();
        assert!((m.brier - 0.21).abs() < 1e-12, "{m:?}");
        assert!(
            (m.reliability - 0.016_666_666_666_667 / 10.0).abs() < 1e-12,
            "{m:?}"
        );
        assert!(
            (m.resolution - 0.416_666_666_666_667 / 10.0).abs() < 1e-12,
            "{m:?}"
        );
        assert!((m.uncertainty - 0.25).abs() < 1e-12);
        assert!(m.within_bin.abs() < 1e-12);
        assert!((m.reliability - m.resolution + m.uncertainty - m.brier).abs() < 1e-12);
    }

    /// With forecasts that differ inside a bin the identity still closes
    /// through the within-bin term (algebra, any input).
    #[test]
    fn murphy_identity_closes_with_spread_bins() {
        let f = [
            (0.05, false),
            (0.93, true),
            (0.99, false),
            (0.31, true),
            (0.38, false),
            (1.0, true),
        ];
        let m = murphy(&f, 10).unwrap();
        let sum = m.reliability - m.resolution + m.uncertainty + m.within_bin;
        assert!((sum - m.brier).abs() < 1e-12, "{m:?}");
        assert!(m.within_bin.abs() > 1e-6);
    }
}
