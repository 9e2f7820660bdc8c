//! The one way odds are written for people: every text table, the timeline,
//! the report's Markdown and the dashboard call these functions, so 42.7 %
//! reads the same everywhere. JSON keeps the raw numbers.
//!
//! The look: a percentage with one decimal in the usual range, two decimals
//! within 0.1 % of either end, and `< 0.01 %` / `> 99.99 %` beyond that, so a
//! probability below 1 never prints as 100 and one above 0 never as 0.
//! [`Detail::Full`] replaces those two bounds with the value itself in
//! e-notation (`3.2e-31 %`, `> 99.99 % (fail 1.0e-8 %)`), worked out from the
//! natural logs so that odds far below the smallest double still print.

use super::ln_one_minus_exp;

/// How much a figure says at the ends of the range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Detail {
    /// `< 0.01 %` and `> 99.99 %` at the ends (dashboards, summaries).
    Compact,
    /// The tail value itself in e-notation (per-task tables).
    Full,
}

/// Below this many percent (or this close to 100), the bounds are printed.
const FLOOR_PCT: f64 = 0.01;
/// Below this many percent from either end, two decimals instead of one.
const FINE_PCT: f64 = 0.1;

/// Odds written from ln p and ln(1 − p); either may be −∞ (odds exactly 0,
/// or certain). The single formatter: the other functions only adapt their
/// inputs to it.
pub fn odds_text(ln_odds: f64, ln_fail: f64, detail: Detail) -> String {
    if ln_odds.is_nan() || ln_fail.is_nan() {
        return "?".into();
    }
    if ln_odds == f64::NEG_INFINITY {
        return "0 %".into();
    }
    if ln_fail == f64::NEG_INFINITY {
        return "100 %".into();
    }
    // In percent: ln(100·p) = ln p + ln 100.
    let ln_pct = ln_odds + std::f64::consts::LN_10 * 2.0;
    let ln_fail_pct = ln_fail + std::f64::consts::LN_10 * 2.0;
    let pct = ln_pct.exp();
    let fail_pct = ln_fail_pct.exp();
    if pct < FLOOR_PCT {
        return match detail {
            Detail::Compact => "< 0.01 %".into(),
            Detail::Full => format!("{} %", sci_from_ln(ln_pct)),
        };
    }
    if fail_pct < FLOOR_PCT {
        return match detail {
            Detail::Compact => "> 99.99 %".into(),
            Detail::Full => format!("> 99.99 % (fail {} %)", sci_from_ln(ln_fail_pct)),
        };
    }
    // Adding 0.0 turns a −0 into +0 (never printed as "-0").
    let pct = pct + 0.0;
    if pct < FINE_PCT || fail_pct < FINE_PCT {
        format!("{pct:.2} %")
    } else {
        format!("{pct:.1} %")
    }
}

/// Odds from a plain probability, compact. NaN prints `?`; values outside
/// [0, 1] are clamped (they only arise from rounding).
pub fn pct(p: f64) -> String {
    if p.is_nan() {
        return "?".into();
    }
    let p = p.clamp(0.0, 1.0);
    odds_text(p.ln(), (-p).ln_1p(), Detail::Compact)
}

/// Odds from their natural log alone, compact (the failure chance is
/// recovered as ln(1 − e^ln), accurate near certainty).
pub fn pct_ln(ln_odds: f64) -> String {
    if ln_odds.is_nan() {
        return "?".into();
    }
    let ln = ln_odds.min(0.0);
    odds_text(ln, ln_one_minus_exp(ln), Detail::Compact)
}

/// Odds as the JSON views carry them (`ln_odds` `null` = exactly 0,
/// `ln_fail` `null` = certain), with the tails written out.
pub fn pct_detail(ln_odds: Option<f64>, ln_fail: Option<f64>) -> String {
    odds_text(
        ln_odds.unwrap_or(f64::NEG_INFINITY),
        ln_fail.unwrap_or(f64::NEG_INFINITY),
        Detail::Full,
    )
}

/// Like [`pct_detail`], compact.
pub fn pct_view(ln_odds: Option<f64>, ln_fail: Option<f64>) -> String {
    odds_text(
        ln_odds.unwrap_or(f64::NEG_INFINITY),
        ln_fail.unwrap_or(f64::NEG_INFINITY),
        Detail::Compact,
    )
}

/// Optional odds for table cells: `—` where there is nothing to show.
pub fn pct_or_dash(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() => pct(p),
        _ => "—".into(),
    }
}

/// `m.me±x` from ln x, so values below the smallest double still print.
fn sci_from_ln(ln: f64) -> String {
    let log10 = ln / std::f64::consts::LN_10;
    let mut exp = log10.floor();
    let mut mant = 10f64.powf(log10 - exp);
    if mant >= 9.95 {
        mant /= 10.0;
        exp += 1.0;
    }
    format!("{mant:.1}e{exp}")
}

#[cfg(test)]
mod tests {
    use super::*;

    // Expected strings are the decimal expansions of the inputs, worked by
    // hand (no outside table is needed to round a number).

    #[test]
    fn the_usual_range_has_one_decimal() {
        assert_eq!(pct(0.427), "42.7 %");
        assert_eq!(pct(0.997), "99.7 %");
        assert_eq!(pct(0.001), "0.1 %");
        assert_eq!(pct(0.5), "50.0 %");
    }

    #[test]
    fn the_ends_are_exact_or_bounded() {
        assert_eq!(pct(0.0), "0 %");
        assert_eq!(pct(1.0), "100 %");
        assert_eq!(pct(-0.0), "0 %");
        assert_eq!(pct(1e-300), "< 0.01 %");
        assert_eq!(pct(1.0 - 1e-12), "> 99.99 %");
        assert_eq!(pct(0.99997), "> 99.99 %");
        assert_eq!(pct(0.9996), "99.96 %");
        assert_eq!(pct(0.0004), "0.04 %");
        // Just under the rounding edge: one decimal would print 100.0.
        assert_eq!(pct(0.99951), "99.95 %");
        assert_eq!(pct(0.99899), "99.9 %");
        assert_eq!(pct(0.99901), "99.90 %");
    }

    #[test]
    fn nothing_below_one_reads_as_a_hundred_nor_above_zero_as_zero() {
        let mut p = 1e-7;
        while p < 1.0 {
            for q in [p, 1.0 - p] {
                let s = pct(q);
                assert!(!s.starts_with("100"), "{q} -> {s}");
                assert!(
                    !s.starts_with("0 ") && !s.starts_with("0.00 "),
                    "{q} -> {s}"
                );
                assert!(!s.starts_with('-'), "{q} -> {s}");
            }
            p *= 1.37;
        }
    }

    #[test]
    fn nan_is_a_question_mark() {
        assert_eq!(pct(f64::NAN), "?");
        assert_eq!(pct_ln(f64::NAN), "?");
        assert_eq!(odds_text(-1.0, f64::NAN, Detail::Full), "?");
    }

    #[test]
    fn from_ln_matches_from_p() {
        for p in [
            1e-5f64,
            0.0004,
            0.001,
            0.25,
            0.427,
            0.9996,
            0.99997,
            1.0 - 1e-12,
        ] {
            assert_eq!(pct_ln(p.ln()), pct(p), "{p}");
        }
        assert_eq!(pct_ln(f64::NEG_INFINITY), "0 %");
        assert_eq!(pct_ln(0.0), "100 %");
    }

    #[test]
    fn detail_writes_the_tails_out() {
        // 1e−33 is 1e−31 percent.
        assert_eq!(
            pct_detail(Some((3.2e-33f64).ln()), Some(-3.2e-33)),
            "3.2e-31 %"
        );
        // Far below f64's range: ln p = −1000 is p ≈ 5.08e−435, 5.1e−433 %.
        assert_eq!(pct_detail(Some(-1000.0), Some(0.0)), "5.1e-433 %");
        assert_eq!(
            pct_detail(Some(-1e-10), Some(1e-10f64.ln())),
            "> 99.99 % (fail 1.0e-8 %)"
        );
        assert_eq!(pct_detail(None, Some(0.0)), "0 %");
        assert_eq!(pct_detail(Some(0.0), None), "100 %");
        assert_eq!(
            pct_detail(Some(0.427f64.ln()), Some(0.573f64.ln())),
            "42.7 %"
        );
        // Mantissa carry: 9.96e−5 % rounds up to 1.0e−4 %, not 10.0e−5.
        assert_eq!(
            pct_detail(Some((9.96e-7f64).ln()), Some(-9.96e-7)),
            "1.0e-4 %"
        );
    }

    #[test]
    fn missing_values_are_a_dash() {
        assert_eq!(pct_or_dash(None), "—");
        assert_eq!(pct_or_dash(Some(f64::NAN)), "—");
        assert_eq!(pct_or_dash(Some(0.323)), "32.3 %");
    }
}
