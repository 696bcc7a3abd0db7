//! Symmetrical components (Fortescue) and phase-to-phase conversions.
//!
//! `a = e^(j·2π/3)`; `X0 = (Xa+Xb+Xc)/3`, `X1 = (Xa + a·Xb + a²·Xc)/3`,
//! `X2 = (Xa + a²·Xb + a·Xc)/3` (C. L. Fortescue, 1918; e.g. Glover, Sarma &
//! Overbye, *Power System Analysis and Design*, ch. 8).

use num_complex::Complex64;

/// `a = e^(j·120°)`.
pub fn a() -> Complex64 {
    Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI / 3.0)
}

/// Zero, positive and negative sequence of three phase phasors.
pub fn sequences(xa: Complex64, xb: Complex64, xc: Complex64) -> [Complex64; 3] {
    let a = a();
    let a2 = a * a;
    [
        (xa + xb + xc) / 3.0,
        (xa + a * xb + a2 * xc) / 3.0,
        (xa + a2 * xb + a * xc) / 3.0,
    ]
}

/// Phase phasors from sequence phasors (the inverse transform).
pub fn phases(x0: Complex64, x1: Complex64, x2: Complex64) -> [Complex64; 3] {
    let a = a();
    let a2 = a * a;
    [x0 + x1 + x2, x0 + a2 * x1 + a * x2, x0 + a * x1 + a2 * x2]
}

/// Positive and negative sequence phase-to-neutral voltages from the
/// sequences of phase-to-phase voltages `Vab, Vbc, Vca`, all in per unit of
/// their own bases (`Un` for phase-to-phase, `Un/√3` for phase-to-neutral):
/// `V1 = V1ab·e^(−j30°)`, `V2 = V2ab·e^(+j30°)`. (In volts the factor is
/// `1/(√3·e^(±j30°))`; the √3 is absorbed by the bases.) The zero sequence
/// cannot be observed from phase-to-phase voltages.
pub fn from_line_sequences(v1ab: Complex64, v2ab: Complex64) -> (Complex64, Complex64) {
    let r = Complex64::from_polar(1.0, std::f64::consts::PI / 6.0);
    (v1ab / r, v2ab * r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_round_trip() {
        let xa = Complex64::new(0.3, -0.2);
        let xb = Complex64::new(-0.7, 0.1);
        let xc = Complex64::new(0.05, 0.9);
        let [x0, x1, x2] = sequences(xa, xb, xc);
        let [ya, yb, yc] = phases(x0, x1, x2);
        assert!((xa - ya).norm() < 1e-15 && (xb - yb).norm() < 1e-15 && (xc - yc).norm() < 1e-15);
    }
}
