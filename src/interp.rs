//! Interpolation weights shared by the tabulated rating and the Monte Carlo emulator.

/// Four-point Lagrange (cubic) weights for a value at `t` ∈ [0, 1) between the second and third
/// of four equally spaced nodes at −1, 0, 1, 2 (Abramowitz & Stegun 1964, eq. 25.2.13).
pub fn lagrange4(t: f64) -> [f64; 4] {
    [
        -t * (t - 1.0) * (t - 2.0) / 6.0,
        (t + 1.0) * (t - 1.0) * (t - 2.0) / 2.0,
        -(t + 1.0) * t * (t - 2.0) / 2.0,
        (t + 1.0) * t * (t - 1.0) / 6.0,
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cubic_is_reproduced_exactly() {
        // analytic: a cubic through four nodes is its own interpolant
        let f = |x: f64| 1.0 - 2.0 * x + 0.5 * x * x * x;
        let w = lagrange4(0.37);
        let v: f64 = w.iter().zip([-1.0, 0.0, 1.0, 2.0]).map(|(w, x)| w * f(x)).sum();
        assert!((v - f(0.37)).abs() < 1e-14);
    }
}
