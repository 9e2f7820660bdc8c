//! The standard normal CDF in log space, accurate from the deep lower tail
//! (z = −40 and far below) to the upper tail (ln Φ(z) ≈ −Φ(−z) for large z).
//!
//! Choice of method (see docs/model.md, "Numerics"):
//! * `erfc` comes from the `libm` crate, a port of the FreeBSD/musl C library
//!   (Sun's fdlibm rational approximations), accurate to about 1 ulp for the
//!   argument it is given. statrs' `erfc` is only good to about 1e−10
//!   relative, too coarse for comparisons made at 1e−10 in ln space.
//! * The argument x = |z|/√2 is itself rounded, and erfc magnifies a relative
//!   error δ of its argument into a relative error of about 2x²·δ = z²·δ
//!   (1e−13 at z = −35). [`half_erfc`] removes that: it computes the
//!   rounding residual r = |z|/√2 − x exactly (fused multiply-add, 1/√2 as a
//!   double-double) and applies the first-order correction
//!   erfc(x + r) = erfc(x)·(1 − r·2e^{−x²}/(√π·erfc(x))), which leaves an
//!   error of order r²x² < 1e−28. The factor 2e^{−x²}/(√π·erfc(x)) is taken
//!   from the bounds of A&S 7.1.13 (within 6 %, ample for a correction of
//!   order 1e−16), which saves an exponential per call.
//! * For z ≥ 0: ln Φ(z) = ln1p(−½·erfc(z/√2)), which keeps the tiny
//!   complement exactly.
//! * For −30 ≤ z < 0: ln Φ(z) = ln(½·erfc(−z/√2)); erfc(21.3) ≈ 1e−198 is far
//!   from underflow, and the relative accuracy of erfc carries into ln.
//! * For z < −30: the asymptotic expansion of Mills' ratio,
//!   Φ(z) = φ(z)/|z| · (1 − 1/z² + 3/z⁴ − 15/z⁶ + …) (Abramowitz & Stegun
//!   26.2.12), taken to 12 terms; at |z| ≥ 30 the truncation error is below
//!   1e−25 relative, and ln Φ = −z²/2 − ½ln(2π) − ln|z| + ln(series) never
//!   underflows.
//!
//! Checked against Abramowitz & Stegun Table 26.1 and against mpmath over
//! z in [−200, 40] (tests/odds_normal.rs).

/// ½·ln(2π).
const HALF_LN_2PI: f64 = 0.918_938_533_204_672_8;

/// 1/√2 as a double-double: `FRAC_1_SQRT_2 + FRAC_1_SQRT_2_LO` (the low part
/// computed with mpmath at 40 digits).
const FRAC_1_SQRT_2_LO: f64 = -4.833_646_656_726_457e-17;

/// 4/π.
const FOUR_OVER_PI: f64 = 4.0 * std::f64::consts::FRAC_1_PI;

/// Below this z the asymptotic series is used.
const ASYMPTOTIC_BELOW: f64 = -30.0;

/// ½·erfc(t/√2) for t ≥ 0, i.e. Φ(−t), with the rounding of t/√2
/// compensated (see the module docs). Returned as (value, ln value).
fn half_erfc(t: f64) -> (f64, f64) {
    let x = t * std::f64::consts::FRAC_1_SQRT_2;
    // t/√2 − x, exactly up to the double-double precision of 1/√2.
    let r = t.mul_add(std::f64::consts::FRAC_1_SQRT_2, -x) + t * FRAC_1_SQRT_2_LO;
    let e = libm::erfc(x);
    if e == 0.0 || x < 0.5 {
        // Near 0 erfc barely depends on the argument's last bit: 2x²δ < 1e−16.
        return (0.5 * e, (0.5 * e).ln());
    }
    // d/dx ln erfc(x) = −2e^{−x²}/(√π·erfc(x)) = −2/(√π·erfcx(x)). The
    // correction r·slope is itself ~1e−16 relative, so the slope is needed
    // to a few percent only: A&S 7.1.13 bounds √π·erfcx(x)/2 between
    // 1/(x + √(x² + 2)) and 1/(x + √(x² + 4/π)); the constant 4/π gives
    // the slope within 6 % for x ≥ 0.5, without a second exponential.
    let slope = x + (x * x + FOUR_OVER_PI).sqrt();
    let ln_factor = -r * slope;
    let v = 0.5 * e * (1.0 + ln_factor);
    (v, (0.5 * e).ln() + ln_factor)
}

/// Φ(z), the standard normal CDF.
pub fn phi(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z >= 0.0 {
        1.0 - half_erfc(z).0
    } else {
        half_erfc(-z).0
    }
}

/// ln Φ(z), accurate across the whole real line; −∞ at z = −∞, 0 at +∞.
pub fn ln_phi(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z == f64::INFINITY {
        return 0.0;
    }
    if z == f64::NEG_INFINITY {
        return f64::NEG_INFINITY;
    }
    if z >= 0.0 {
        (-half_erfc(z).0).ln_1p()
    } else if z >= ASYMPTOTIC_BELOW {
        half_erfc(-z).1
    } else {
        // ln φ(z) − ln|z| + ln(Σ (−1)^n (2n−1)!! / z^{2n})
        let z2 = z * z;
        let mut term = 1.0;
        let mut sum = 1.0;
        for n in 1..=12 {
            term *= -((2 * n - 1) as f64) / z2;
            sum += term;
        }
        -0.5 * z2 - HALF_LN_2PI - (-z).ln() + sum.ln()
    }
}

/// ln(1 − Φ(z)) = ln Φ(−z): the log of the failure probability, so that
/// near-certain tasks still rank against each other.
pub fn ln_phi_complement(z: f64) -> f64 {
    ln_phi(-z)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn residual_correction_is_small_and_signed() {
        // At t = 35 the correction matters (the uncorrected value is off by
        // about 1e−13 relative) but stays tiny.
        let (v, ln_v) = half_erfc(35.0);
        let plain = 0.5 * libm::erfc(35.0 * std::f64::consts::FRAC_1_SQRT_2);
        assert!(v != plain);
        assert!(((v - plain) / plain).abs() < 1e-12);
        assert!((ln_v - v.ln()).abs() < 1e-12 * v.ln().abs());
    }

    #[test]
    fn branches_meet() {
        // Series and erfc branch agree at the switch to rounding.
        let z = ASYMPTOTIC_BELOW;
        let series = {
            let z2 = z * z;
            let mut term = 1.0;
            let mut sum = 1.0;
            for n in 1..=12 {
                term *= -((2 * n - 1) as f64) / z2;
                sum += term;
            }
            -0.5 * z2 - HALF_LN_2PI - (-z).ln() + sum.ln()
        };
        let erfc_branch = half_erfc(-z).1;
        assert!((series - erfc_branch).abs() < 1e-13 * series.abs());
    }
}
