//! Point and aggregate elasticities and average marginal effects of every
//! attribute and characteristic, from the derivatives dP_ij/dV_ik that each
//! model family supplies (`Family::dprob`).

use serde::Serialize;

use crate::design::{Design, Value};
use crate::model::enumerate::Enumeration;
use crate::model::Family;
use crate::spec::Spec;

/// Which parameter multiplies attribute `a` in alternative `k`, and
/// characteristic `c` in `l`; and the alternatives the figures cover (the
/// focus: all of them, or the top ones of a model with many).
#[derive(Clone, Debug)]
pub struct TermMap {
    /// `None` also for an alternative outside the focus (its attributes are not changed).
    pub attribute: Vec<Vec<Option<usize>>>,
    pub characteristic: Vec<Vec<Option<usize>>>,
    /// The alternatives the figures cover, in the order they are reported.
    pub focus: Vec<usize>,
    /// Each alternative's position in `focus`.
    pub position: Vec<Option<usize>>,
}

impl TermMap {
    /// Every alternative in focus.
    pub fn new(spec: &Spec, d: &Design) -> TermMap {
        let all: Vec<usize> = (0..d.alternatives()).collect();
        TermMap::focused(spec, d, &all)
    }

    /// The figures of the alternatives in `focus` only (changed and affected).
    pub fn focused(spec: &Spec, d: &Design, focus: &[usize]) -> TermMap {
        let j = d.alternatives();
        let mut position = vec![None; j];
        for (f, &k) in focus.iter().enumerate() {
            position[k] = Some(f);
        }
        let mut attribute = vec![vec![None; j]; spec.attributes.len()];
        let mut characteristic = vec![vec![None; j]; spec.characteristics.len()];
        for (k, feats) in d.features.iter().enumerate() {
            for f in feats {
                match f.value {
                    Value::Attribute(a) if position[k].is_some() => attribute[a][k] = Some(f.param),
                    Value::Characteristic(c) => characteristic[c][k] = Some(f.param),
                    _ => {}
                }
            }
        }
        TermMap {
            attribute,
            characteristic,
            focus: focus.to_vec(),
            position,
        }
    }

    /// Whether every alternative is in focus.
    pub fn whole(&self) -> bool {
        self.focus.len() == self.position.len()
    }
}

/// Aggregate figures at one parameter vector, flattened for the delta method,
/// over the alternatives in focus (`TermMap::focus`; indices below are
/// positions in it).
#[derive(Clone, Debug)]
pub struct Sens {
    /// How many alternatives are in focus.
    pub alternatives: usize,
    /// [a][k changed][j affected] aggregate elasticities of share j to attribute a of k.
    pub attr_elast: Vec<f64>,
    /// [a][k][j] average marginal effects dP_j/dx_k.
    pub attr_me: Vec<f64>,
    /// [c][j] aggregate elasticities of share j to characteristic c.
    pub char_elast: Vec<f64>,
    /// [c][j] average marginal effects dP_j/dz.
    pub char_me: Vec<f64>,
}

impl Sens {
    pub fn flat(&self) -> Vec<f64> {
        let mut v = self.attr_elast.clone();
        v.extend(&self.attr_me);
        v.extend(&self.char_elast);
        v.extend(&self.char_me);
        v
    }
}

/// Where each group of sums sits in the accumulator of `sensitivities`:
/// `[attr num a,k,j][attr me a,k,j][char num c,j][char me c,j][P sums j]`.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Layout {
    /// Alternatives in focus (the figures' `j`).
    pub j: usize,
    /// All alternatives (the derivatives' rows and columns).
    pub all: usize,
    pub na: usize,
    pub nc: usize,
}

impl Layout {
    pub fn new(d: &Design, map: &TermMap) -> Layout {
        Layout {
            j: map.focus.len(),
            all: d.alternatives(),
            na: map.attribute.len(),
            nc: map.characteristic.len(),
        }
    }
    /// Offsets of the attribute marginal effects, characteristic numerators,
    /// characteristic marginal effects and probability sums; the width.
    pub fn offsets(&self) -> (usize, usize, usize, usize, usize) {
        let (j, na, nc) = (self.j, self.na, self.nc);
        let o4 = 2 * na * j * j + 2 * nc * j;
        (
            na * j * j,
            2 * na * j * j,
            2 * na * j * j + nc * j,
            o4,
            o4 + j,
        )
    }
}

/// One situation's dP_j/dV_k as `add_point` reads them: every column
/// (J x J), or the focus's columns only (J x focus, when no characteristic
/// needs the others).
#[derive(Clone, Copy)]
pub(crate) struct Derivatives<'a> {
    pub dp: &'a [f64],
    pub focused: bool,
}

impl Derivatives<'_> {
    /// dP_jj/dV_k, k the alternative at focus position `kf`.
    #[inline]
    fn at(&self, lay: Layout, jj: usize, (kf, k): (usize, usize)) -> f64 {
        if self.focused {
            self.dp[jj * lay.j + kf]
        } else {
            self.dp[jj * lay.all + k]
        }
    }
}

/// Adds one coefficient point of situation `i` (its weight `wi` times the
/// situation's) to the sums: dP/dx through a coefficient is the point's dP/dV
/// (`dp`) times the point's coefficient.
#[allow(clippy::too_many_arguments)]
pub(crate) fn add_point(
    d: &Design,
    map: &TermMap,
    lay: Layout,
    i: usize,
    wi: f64,
    coef: &[f64],
    p: &[f64],
    dp: Derivatives,
    acc: &mut [f64],
) {
    let (j, all, na, nc) = (lay.j, lay.all, lay.na, lay.nc);
    let (o1, o2, o3, o4, _) = lay.offsets();
    for a in 0..na {
        for (kf, &k) in map.focus.iter().enumerate() {
            let Some(param) = map.attribute[a][k] else {
                continue;
            };
            if !d.available(i, k) {
                continue;
            }
            let b = coef[param];
            let x = d.obs.attributes[a][i * all + k];
            for (jf, &jj) in map.focus.iter().enumerate() {
                let dpk = dp.at(lay, jj, (kf, k));
                acc[(a * j + kf) * j + jf] += wi * b * x * dpk;
                acc[o1 + (a * j + kf) * j + jf] += wi * b * dpk;
            }
        }
    }
    for c in 0..nc {
        let z = d.obs.characteristics[c][i];
        for (jf, &jj) in map.focus.iter().enumerate() {
            let mut sum = 0.0;
            for l in 0..all {
                if let Some(param) = map.characteristic[c][l] {
                    sum += dp.dp[jj * all + l] * coef[param];
                }
            }
            acc[o2 + c * j + jf] += wi * z * sum;
            acc[o3 + c * j + jf] += wi * sum;
        }
    }
    for (jf, &jj) in map.focus.iter().enumerate() {
        acc[o4 + jf] += wi * p[jj];
    }
}

/// The aggregate figures from the summed accumulator (`tw`: total weight).
pub(crate) fn finish(lay: Layout, sums: &[f64], tw: f64) -> Sens {
    let (j, na, nc) = (lay.j, lay.na, lay.nc);
    let (o1, o2, o3, o4, _) = lay.offsets();
    let psum = &sums[o4..o4 + j];
    let ratio = |num: f64, jj: usize| {
        if psum[jj] > 0.0 {
            num / psum[jj]
        } else {
            f64::NAN
        }
    };
    let mut attr_elast = vec![0.0; na * j * j];
    let mut attr_me = vec![0.0; na * j * j];
    for idx in 0..na * j * j {
        let jj = idx % j;
        attr_elast[idx] = ratio(sums[idx], jj);
        attr_me[idx] = sums[o1 + idx] / tw;
    }
    let mut char_elast = vec![0.0; nc * j];
    let mut char_me = vec![0.0; nc * j];
    for idx in 0..nc * j {
        char_elast[idx] = ratio(sums[o2 + idx], idx % j);
        char_me[idx] = sums[o3 + idx] / tw;
    }
    Sens {
        alternatives: j,
        attr_elast,
        attr_me,
        char_elast,
        char_me,
    }
}

/// The aggregate figures at `beta`, one pass over every coefficient point of
/// every situation (one for fixed coefficients), each weighted by its point's weight.
pub fn sensitivities(family: &dyn Family, d: &Design, map: &TermMap, beta: &[f64]) -> Sens {
    let lay = Layout::new(d, map);
    let all = lay.all;
    let width = lay.offsets().4;
    let w = &d.obs.weight;
    // Only the focus's columns when no characteristic reads the others.
    let focused = !map.whole() && lay.nc == 0;
    let cols = if focused { lay.j } else { all };
    let parts = Enumeration::new(family, d, beta).points(
        |_| {
            (
                vec![0.0; width],
                vec![0.0; all * cols],
                vec![0.0; all * all * usize::from(focused)],
            )
        },
        |(acc, dp, full), pt| {
            if focused {
                family.dprob_columns(pt.coefficients, (pt.v, pt.p), &map.focus, full, dp);
            } else {
                family.dprob(pt.coefficients, pt.v, pt.p, dp);
            }
            let wi = w[pt.i] * pt.weight;
            let der = Derivatives { dp, focused };
            add_point(d, map, lay, pt.i, wi, pt.coefficients, pt.p, der, acc);
        },
    );
    let mut sums = vec![0.0; width];
    for (part, _, _) in parts {
        sums.iter_mut().zip(&part).for_each(|(a, b)| *a += b);
    }
    finish(lay, &sums, d.total_weight())
}

/// One reported elasticity (JSON contract: variable, changed, affected, value, std_error).
#[derive(Clone, Debug, Serialize)]
pub struct ElasticityRow {
    pub variable: String,
    /// The alternative whose attribute changes; null for characteristics.
    pub changed: Option<String>,
    pub affected: String,
    pub value: f64,
    pub std_error: f64,
    /// Arc elasticity for the stated percentage change, by re-simulation.
    pub arc: f64,
}

/// One average marginal effect (JSON: variable, alternative, value, std_error).
#[derive(Clone, Debug, Serialize)]
pub struct MarginalRow {
    pub variable: String,
    /// For attributes, the alternative whose attribute changes; null for characteristics.
    pub changed: Option<String>,
    pub alternative: String,
    pub value: f64,
    pub std_error: f64,
}
