//! The standard normal CDF in log space, accurate from the deep lower tail
//! (z = −40 and far below) to the upper tail (ln Φ(z) ≈ −Φ(−z) for large z).
//!
//! Choice of method (see docs/model.md):
//! * `erfc` comes from the `libm` crate, a port of the FreeBSD/musl C library
//!   (Sun's fdlibm rational approximations), accurate to about 1 ulp. statrs'
//!   `erfc` is only good to about 1e−10 relative, too coarse for comparisons
//!   made at 1e−10 in ln space.
//! * For z ≥ 0: ln Φ(z) = ln1p(−½·erfc(z/√2)), which keeps the tiny
//!   complement exactly.
//! * For −30 ≤ z < 0: ln Φ(z) = ln(½·erfc(−z/√2)); erfc(21.3) ≈ 1e−198 is far
//!   from underflow, and the relative accuracy of erfc carries into ln.
//! * For z < −30: the asymptotic (Laplace) expansion of Mills' ratio,
//!   Φ(z) = φ(z)/|z| · (1 − 1/z² + 3/z⁴ − 15/z⁶ + …) (Abramowitz & Stegun
//!   26.2.12), taken to 12 terms; at |z| ≥ 30 the truncation error is below
//!   1e−25 relative.

/// ½·ln(2π).
const HALF_LN_2PI: f64 = 0.918_938_533_204_672_7;

/// Below this z the asymptotic series is used.
const ASYMPTOTIC_BELOW: f64 = -30.0;

/// Φ(z), the standard normal CDF.
pub fn phi(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z >= 0.0 {
        1.0 - 0.5 * libm::erfc(z / std::f64::consts::SQRT_2)
    } else {
        0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)
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
        (-0.5 * libm::erfc(z / std::f64::consts::SQRT_2)).ln_1p()
    } else if z >= ASYMPTOTIC_BELOW {
        (0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)).ln()
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
