//! Sample enumeration of a prepared scenario: base and scenario shares,
//! the switching matrix, per-segment shares and revenue, in one pass; and
//! the same shares over parameter draws for uncertainty bands.

use super::prepare::Prepared;
use crate::design::Design;
use crate::model::enumerate::Enumeration;
use crate::model::{Baseline, Family};

/// What one pass over the situations gives (all divided by the relevant total weight).
#[derive(Clone, Debug)]
pub struct Pass {
    pub base: Vec<f64>,
    pub scenario: Vec<f64>,
    /// [from][to] share of all demand moving from a base alternative to a scenario one
    /// (diagonal: staying).
    pub switching: Vec<f64>,
    /// Per segment: (base, scenario) shares.
    pub segments: Vec<(Vec<f64>, Vec<f64>)>,
    pub segment_weight: Vec<f64>,
    pub segment_count: Vec<f64>,
    /// Mean price paid per situation by alternative (base, scenario), when a price attribute is named.
    pub revenue: Option<(Vec<f64>, Vec<f64>)>,
}

/// Pairs one situation's base and scenario probabilities: each alternative keeps
/// min(P, P'); what losers lose goes to gainers in proportion to their gains.
/// Under logit this equals the individual switching formula when one alternative changes.
#[inline]
pub fn pair(p0: &[f64], p1: &[f64], flows: &mut [f64], w: f64) {
    let m = p1.len();
    let gain: f64 = (0..m).map(|l| (p1[l] - p0[l]).max(0.0)).sum();
    for a in 0..m {
        let pa = p0[a];
        flows[a * m + a] += w * pa.min(p1[a]);
        let loss = pa - p1[a];
        if loss > 0.0 && gain > 0.0 {
            for l in 0..m {
                let g = p1[l] - p0[l];
                if g > 0.0 {
                    flows[a * m + l] += w * loss * g / gain;
                }
            }
        }
    }
}

/// The most alternatives (new ones included) for which a forecast pairs
/// each situation's losses with its gains (the switching matrix): beyond,
/// that work grows as alternatives² per situation.
pub const SWITCHING_UP_TO: usize = 60;

/// What a pass sums besides the shares: revenue over a price attribute, and
/// the switching matrix (alternatives² per situation: only the point pass
/// wants it, not the bands' draws).
#[derive(Clone, Copy, Debug)]
pub struct What {
    pub price: Option<usize>,
    pub switching: bool,
}

impl What {
    /// Shares alone (a band's draw, a sweep).
    pub const SHARES: What = What {
        price: None,
        switching: false,
    };

    /// The point forecast: switching, and revenue with a price attribute.
    pub fn point(price: Option<usize>) -> What {
        What {
            price,
            switching: true,
        }
    }
}

/// Point simulation at `beta`. `segments` gives each situation's segment index (and the count of segments).
/// `baseline`, when given, holds the base utilities and probabilities at this `beta`.
pub fn run(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    prep: &Prepared,
    segments: Option<(&[u32], usize)>,
    what: What,
    baseline: Option<&Baseline>,
) -> Pass {
    sums(family, d, beta, prep, segments, what, baseline).pass(d.total_weight())
}

/// The weighted sums of one pass, before they are divided by the weights:
/// `base m | scenario m | switching m*m | per segment (base m, scenario m,
/// weight, count) | revenue 2m`. Sums over parts of a population add up.
#[derive(Clone, Debug)]
pub struct Sums {
    pub acc: Vec<f64>,
    pub m: usize,
    pub segments: usize,
    pub price: bool,
}

impl Sums {
    /// Zero sums for `m` alternatives and `segments` segments.
    pub fn zero(m: usize, segments: usize, price: bool) -> Sums {
        Sums {
            acc: vec![0.0; 2 * m + m * m + segments * (2 * m + 2) + 2 * m],
            m,
            segments,
            price,
        }
    }

    fn o_seg(&self) -> usize {
        2 * self.m + self.m * self.m
    }

    fn o_rev(&self) -> usize {
        self.o_seg() + self.segments * (2 * self.m + 2)
    }

    /// Segment `s`'s block: base m, scenario m, weight, count.
    pub fn segment(&self, s: usize) -> &[f64] {
        let w = 2 * self.m + 2;
        let at = self.o_seg() + s * w;
        &self.acc[at..at + w]
    }

    /// Adds `factor` times the sums of another part whose segment `s` is this
    /// one's `into[s]` (the whole layout when `into` is `None`).
    pub fn add(&mut self, other: &Sums, factor: f64, into: Option<&[usize]>) {
        let scaled = |x: f64| if factor == 1.0 { x } else { x * factor };
        let core = other.o_seg();
        for k in 0..core {
            self.acc[k] += scaled(other.acc[k]);
        }
        let (ro, rs) = (other.o_rev(), self.o_rev());
        for k in 0..2 * self.m {
            self.acc[rs + k] += scaled(other.acc[ro + k]);
        }
        let w = 2 * self.m + 2;
        for s in 0..other.segments {
            let to = into.map_or(s, |i| i[s]);
            let (a, b) = (self.o_seg() + to * w, other.o_seg() + s * w);
            for k in 0..2 * self.m + 1 {
                self.acc[a + k] += scaled(other.acc[b + k]);
            }
            // The count is a count, not a weight.
            self.acc[a + 2 * self.m + 1] += other.acc[b + 2 * self.m + 1];
        }
    }

    /// One more segment (zero sums) at the end.
    pub fn push_segment(&mut self) {
        let at = self.o_rev();
        let w = 2 * self.m + 2;
        self.acc.splice(at..at, std::iter::repeat_n(0.0, w));
        self.segments += 1;
    }

    /// The shares: sums divided by the total weight `tw` (segments by their own weight).
    pub fn pass(&self, tw: f64) -> Pass {
        let (m, ns) = (self.m, self.segments);
        let acc = &self.acc;
        let o_sw = 2 * m;
        let o_seg = self.o_seg();
        let o_rev = self.o_rev();
        let scale = |v: &[f64], t: f64| v.iter().map(|x| x / t).collect::<Vec<f64>>();
        let mut segs = Vec::new();
        let mut sw = Vec::new();
        let mut sc = Vec::new();
        for s in 0..ns {
            let base = o_seg + s * (2 * m + 2);
            let wt = acc[base + 2 * m];
            segs.push((
                scale(&acc[base..base + m], wt),
                scale(&acc[base + m..base + 2 * m], wt),
            ));
            sw.push(wt);
            sc.push(acc[base + 2 * m + 1]);
        }
        Pass {
            base: scale(&acc[..m], tw),
            scenario: scale(&acc[m..2 * m], tw),
            switching: scale(&acc[o_sw..o_seg], tw),
            segments: segs,
            segment_weight: sw,
            segment_count: sc,
            revenue: self.price.then(|| {
                (
                    scale(&acc[o_rev..o_rev + m], tw),
                    scale(&acc[o_rev + m..o_rev + 2 * m], tw),
                )
            }),
        }
    }
}

/// The sums of a point simulation at `beta` (see `run`).
pub fn sums(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    prep: &Prepared,
    segments: Option<(&[u32], usize)>,
    what: What,
    baseline: Option<&Baseline>,
) -> Sums {
    let price = what.price;
    let j = d.alternatives();
    let m = prep.alternatives();
    let ns = segments.map(|s| s.1).unwrap_or(0);
    let w = &d.obs.weight;
    // accumulator: base m | scen m | switch m*m | seg ns*(2m + 2) | revenue 2m
    let o_sw = 2 * m;
    let o_seg = o_sw + m * m;
    let o_rev = o_seg + ns * (2 * m + 2);
    let width = o_rev + 2 * m;
    let price_delta: Vec<Option<&Vec<f64>>> = (0..j)
        .map(|k| {
            prep.attribute_deltas
                .iter()
                .find(|x| Some(x.0) == price && x.2 == k)
                .map(|x| &x.3)
        })
        .collect();
    let price_new: Vec<Option<&Vec<f64>>> = prep
        .new
        .iter()
        .map(|na| {
            price.and_then(|a| {
                let p = prep.map.attribute[a][na.like]?;
                na.attributes.iter().find(|x| x.0 == p).map(|x| &x.1)
            })
        })
        .collect();
    let acc = Enumeration::new(family, d, beta)
        .baseline(baseline)
        .what_if(prep)
        .fold(width, |acc, s| {
            let (i, p0, p1) = (s.i, s.p0, s.p1);
            let wi = w[i];
            for a in 0..m {
                acc[a] += wi * p0[a];
                acc[m + a] += wi * p1[a];
            }
            if what.switching && m <= SWITCHING_UP_TO {
                pair(p0, p1, &mut acc[o_sw..o_seg], wi);
            }
            if let Some((seg, _)) = segments {
                let base = o_seg + seg[i] as usize * (2 * m + 2);
                for a in 0..m {
                    acc[base + a] += wi * p0[a];
                    acc[base + m + a] += wi * p1[a];
                }
                acc[base + 2 * m] += wi;
                acc[base + 2 * m + 1] += 1.0;
            }
            if let Some(a) = price {
                for k in 0..j {
                    let x0 = d.obs.attributes[a][i * j + k];
                    let x1 = x0 + price_delta[k].map(|dl| dl[i]).unwrap_or(0.0);
                    acc[o_rev + k] += wi * p0[k] * x0;
                    acc[o_rev + m + k] += wi * p1[k] * x1;
                }
                for (n, pn) in price_new.iter().enumerate() {
                    if let Some(values) = pn {
                        acc[o_rev + m + j + n] += wi * p1[j + n] * values[i];
                    }
                }
            }
        });
    Sums {
        acc,
        m,
        segments: ns,
        price: price.is_some(),
    }
}

/// (base, scenario) shares of each segment.
pub type SegmentShares = Vec<(Vec<f64>, Vec<f64>)>;

/// Scenario shares only (for draws and sweeps): (base, scenario) overall and per segment.
pub fn shares_only(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    prep: &Prepared,
    segments: Option<(&[u32], usize)>,
) -> (Vec<f64>, Vec<f64>, SegmentShares) {
    let p = run(family, d, beta, prep, segments, What::SHARES, None);
    (p.base, p.scenario, p.segments)
}
