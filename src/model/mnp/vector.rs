//! Branch-free normal functions for the GHK kernel's inner loops, written so
//! that the compiler vectorises them across draws: Phi(z) with the inverse
//! Mills ratio and exp(-z^2/2) from one Chebyshev series (the form
//! erfc(x) = t exp(-x^2 + g(t)), t = 2/(2 + x), with g smooth on [0, 1];
//! Press et al., Numerical Recipes, 3rd ed., §6.2.2), its coefficients
//! computed once from the careful functions in `model::normal`; and the
//! quantile by Wichura's AS 241 with its three regions computed and
//! selected. Accurate to about 1e-15 relative (tested against `normal`).

use std::sync::OnceLock;

use crate::model::logit::fastmath::{exp_nonpositive, ln_positive, madd};
use crate::model::normal;

/// Chebyshev coefficients of g kept (the rest are below 1e-17).
pub const TERMS: usize = 34;
const NODES: usize = 96;
const SQRT_2_OVER_PI: f64 = 0.797_884_560_802_865_4;
const INV_SQRT_2PI: f64 = 0.398_942_280_401_432_7;

/// g(t) = ln(erfc(x) / t) + x^2 at x = 2/t - 2 from the careful functions:
/// erfc(x) = 2 (1 - Phi(x sqrt 2)), through the Mills ratio for large x.
fn g_exact(t: f64) -> f64 {
    let x = 2.0 / t - 2.0;
    if x < 1.2 {
        (libm::erfc(x) / t).ln() + x * x
    } else {
        // erfc(x) = 2 phi(x sqrt2) R(x sqrt2), phi(x sqrt 2) = exp(-x^2) / sqrt(2 pi).
        let y = x * std::f64::consts::SQRT_2;
        let r = normal::mills_ratio(y);
        (2.0 * INV_SQRT_2PI * r / t).ln()
    }
}

/// The coefficients of g in Chebyshev polynomials of y = 2t - 1 (computed once).
pub fn coefficients() -> &'static [f64; TERMS] {
    static C: OnceLock<[f64; TERMS]> = OnceLock::new();
    C.get_or_init(|| {
        let pi = std::f64::consts::PI;
        let g: Vec<f64> = (0..NODES)
            .map(|k| {
                let y = (pi * (k as f64 + 0.5) / NODES as f64).cos();
                g_exact(0.5 * (y + 1.0))
            })
            .collect();
        let mut c = [0.0; TERMS];
        for (j, cj) in c.iter_mut().enumerate() {
            let s: f64 = (0..NODES)
                .map(|k| g[k] * (pi * j as f64 * (k as f64 + 0.5) / NODES as f64).cos())
                .sum();
            *cj = 2.0 * s / NODES as f64;
        }
        c[0] *= 0.5;
        c
    })
}

/// Phi(z) and phi(z)/Phi(z) over a block (`z`, `p`, `lam` of one length up
/// to `BLOCK`), each stage a plain loop over the block that vectorises.
#[inline(always)]
pub fn phi_block<const F: bool>(
    z: &[f64],
    p: &mut [f64],
    lam: &mut [f64],
    c: &[f64; TERMS],
    s: &mut Stages,
) {
    let n = z.len();
    let (t, y2, b1, b2) = (
        &mut s.t[..n],
        &mut s.y2[..n],
        &mut s.b1[..n],
        &mut s.b2[..n],
    );
    for r in 0..n {
        let x = z[r].abs() * std::f64::consts::FRAC_1_SQRT_2;
        let tr = 2.0 / (2.0 + x);
        t[r] = tr;
        y2[r] = 2.0 * (2.0 * tr - 1.0);
        b1[r] = 0.0;
        b2[r] = 0.0;
    }
    // Clenshaw's recurrence for sum c_j T_j(y), the block in lockstep.
    for j in (1..TERMS).rev() {
        let cj = c[j];
        for r in 0..n {
            let b0 = madd::<F>(y2[r], b1[r], cj - b2[r]);
            b2[r] = b1[r];
            b1[r] = b0;
        }
    }
    for r in 0..n {
        let g = madd::<F>(0.5 * y2[r], b1[r], c[0] - b2[r]);
        let x = z[r].abs() * std::f64::consts::FRAC_1_SQRT_2;
        let e1 = exp_nonpositive::<F>(g);
        let e2 = exp_nonpositive::<F>(-x * x);
        let half = 0.5 * t[r] * e1 * e2; // Phi(-|z|)
        let neg = z[r] < 0.0;
        let pr = if neg { half } else { 1.0 - half };
        p[r] = pr;
        lam[r] = if neg {
            SQRT_2_OVER_PI / (t[r] * e1)
        } else {
            e2 * INV_SQRT_2PI / pr
        };
    }
}

/// Scratch of `phi_block`.
#[derive(Clone, Debug)]
pub struct Stages {
    t: Vec<f64>,
    y2: Vec<f64>,
    b1: Vec<f64>,
    b2: Vec<f64>,
}

impl Stages {
    pub fn new(block: usize) -> Stages {
        Stages {
            t: vec![0.0; block],
            y2: vec![0.0; block],
            b1: vec![0.0; block],
            b2: vec![0.0; block],
        }
    }
}

/// Phi(z), phi(z)/Phi(z) at one point (the block version's arithmetic).
pub fn phi_parts(z: f64) -> (f64, f64) {
    let (mut p, mut l) = ([0.0], [0.0]);
    phi_block::<false>(&[z], &mut p, &mut l, coefficients(), &mut Stages::new(1));
    (p[0], l[0])
}

#[inline(always)]
fn poly<const F: bool>(c: &[f64; 8], x: f64) -> f64 {
    let mut v = c[7];
    for k in (0..7).rev() {
        v = madd::<F>(v, x, c[k]);
    }
    v
}

/// The standard normal quantile by AS 241 (`normal::quantile_fast`'s
/// coefficients), every region computed and the right one selected;
/// 1e-300 <= u < 1.
#[inline(always)]
pub fn quantile<const F: bool>(u: f64) -> f64 {
    use normal::as241::{A, B, C, D, E, F as FF};
    let q = u - 0.5;
    let r1 = 0.180_625 - q * q;
    let central = q * poly::<F>(&A, r1) / poly::<F>(&B, r1);
    let rr = if q < 0.0 { u } else { 1.0 - u };
    let r = (-ln_positive::<F>(rr)).sqrt();
    let near = poly::<F>(&C, r - 1.6) / poly::<F>(&D, r - 1.6);
    let far = poly::<F>(&E, r - 5.0) / poly::<F>(&FF, r - 5.0);
    let tail = if r <= 5.0 { near } else { far };
    let tail = if q < 0.0 { -tail } else { tail };
    if q.abs() <= 0.425 {
        central
    } else {
        tail
    }
}

/// exp for the kernel (any argument below 709).
#[inline(always)]
pub fn exp<const F: bool>(x: f64) -> f64 {
    exp_nonpositive::<F>(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn branch_free_normal_functions_match_the_careful_ones() {
        let c = coefficients();
        assert!(
            c[TERMS - 1].abs() < 1e-16,
            "series not converged: {:e}",
            c[TERMS - 1]
        );
        for k in -3500..=900 {
            let z = k as f64 * 0.01;
            let (p, lam) = phi_parts(z);
            let want = normal::cdf(z);
            // exp(-z^2/2) carries the rounding of z^2: relative error ~ z^2 eps.
            let tol = 1e-14 * (z * z).max(2.0);
            assert!((p / want - 1.0).abs() < tol, "Phi({z}): {p} vs {want}");
            let wl = normal::inv_mills(z);
            assert!((lam / wl - 1.0).abs() < tol, "lambda({z}): {lam} vs {wl}");
        }
        for e in 0..300 {
            for m in [1.0, 2.5, 7.0] {
                let u = m * 10f64.powi(-e) / 7.5;
                let (a, b) = (quantile::<false>(u), normal::quantile_fast(u));
                assert!(
                    (a - b).abs() <= 1e-14 * b.abs().max(1.0),
                    "Q({u}): {a} vs {b}"
                );
            }
        }
        for k in 1..2000 {
            let u = k as f64 / 2000.0;
            let (a, b) = (quantile::<false>(u), normal::quantile_fast(u));
            assert!(
                (a - b).abs() <= 1e-14 * b.abs().max(1.0),
                "Q({u}): {a} vs {b}"
            );
        }
    }
}
