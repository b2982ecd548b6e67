//! The garden panel demo: bedding-plant purchases at the invented Hobbleberry
//! Garden Centres of Ambleweir, made by two hidden segments of shoppers (a
//! latent class logit with a membership model on garden size).
//!
//! 1,000 shoppers each buy bedding plants on 8 occasions, choosing between
//! seed packets (cheap, slow to flower), trays of plug plants and ready
//! potted plants (dear, in flower now). Every shopper belongs to one of two
//! segments, drawn once from a membership logit on their garden size:
//! "budget growers" (class 1, the larger: price-sensitive and patient) and
//! "instant gardeners" (class 2: hardly mind the price, mind every week of
//! waiting and like potted plants). Within a segment the choices follow that
//! segment's logit (the largest utility plus a Gumbel draw). The shopper's
//! age is recorded but plays no part in either segment or choice.

use std::path::Path;

use super::{pick, round, truth};
use crate::data::write::{table, Values};
use crate::error::Result;
use crate::rng::Rng;

/// True parameters in the latent class logit's names (`<term>_class<k>`,
/// packet the base alternative; class 1 the budget growers, the larger
/// segment), then the membership logit of class 2 against class 1:
/// P(class 2) = 1 / (1 + exp(-(member_class2 + member_class2_garden_size *
/// garden_size))), garden size in tens of square metres.
pub const GARDEN_TRUTH: &[(&str, f64)] = &[
    ("asc_plugs_class1", 0.5),
    ("asc_potted_class1", 1.6),
    ("price_class1", -0.40),
    ("weeks_class1", -0.06),
    ("peat_free_class1", 0.5),
    ("asc_plugs_class2", 0.3),
    ("asc_potted_class2", 0.6),
    ("price_class2", -0.10),
    ("weeks_class2", -0.24),
    ("peat_free_class2", 0.5),
    ("member_class2", -1.3),
    ("member_class2_garden_size", 0.09),
];

/// The segments' shares in the demo's sample: the average over its 1,000
/// shoppers of the true membership probabilities (class 1, class 2), as a
/// latent class fit reports its class shares. (The draws put 615 shoppers
/// in class 1 and 385 in class 2.)
pub const GARDEN_SHARES: [f64; 2] = [0.6134, 0.3866];

/// The alternatives, packet first (the base).
pub const GARDEN_ALTERNATIVES: [&str; 3] = ["packet", "plugs", "potted"];

/// The file's columns in order; `choice` is the third.
const COLUMNS: [&str; 13] = [
    "shopper",
    "occasion",
    "choice",
    "packet_price",
    "packet_weeks",
    "plugs_price",
    "plugs_weeks",
    "plugs_peat_free",
    "potted_price",
    "potted_weeks",
    "potted_peat_free",
    "garden_size",
    "age",
];

/// The true probability that a shopper with this garden (tens of square
/// metres) is an instant gardener (class 2).
fn class2_probability(garden_size: f64) -> f64 {
    let t = |n: &str| truth(GARDEN_TRUTH, n);
    let u = t("member_class2") + t("member_class2_garden_size") * garden_size;
    1.0 / (1.0 + (-u).exp())
}

/// One shopper: what stays the same across their purchases.
struct Shopper {
    garden_size: f64,
    age: i64,
    /// 1 (budget grower) or 2 (instant gardener).
    class: usize,
}

impl Shopper {
    fn draw(rng: &mut Rng) -> Self {
        // Garden sizes skewed to the right: median about 75 square metres.
        let garden_size = round((2.0 + 0.7 * rng.normal()).exp().clamp(1.0, 30.0), 1);
        let age = 22 + rng.below(60) as i64;
        let class = if rng.uniform() < class2_probability(garden_size) {
            2
        } else {
            1
        };
        Shopper {
            garden_size,
            age,
            class,
        }
    }
}

/// What the shelves offer on one occasion, per alternative (packet, plugs,
/// potted): price per planting, weeks until in flower, grown peat-free.
struct Offer {
    price: [f64; 3],
    weeks: [i64; 3],
    peat_free: [i64; 3],
}

impl Offer {
    fn draw(rng: &mut Rng) -> Self {
        let price = [
            round(2.0 + 3.0 * rng.uniform(), 2),
            round(5.0 + 7.0 * rng.uniform(), 2),
            round(10.0 + 14.0 * rng.uniform(), 2),
        ];
        let weeks = [
            8 + rng.below(11) as i64,
            3 + rng.below(7) as i64,
            rng.below(3) as i64,
        ];
        // Seed packets hold no compost: only plugs and pots may be peat-free.
        let peat_free = [
            0,
            (rng.uniform() < 0.5) as i64,
            (rng.uniform() < 0.5) as i64,
        ];
        Offer {
            price,
            weeks,
            peat_free,
        }
    }

    /// The utilities of the three alternatives to a shopper of `class`.
    fn utilities(&self, class: usize) -> [f64; 3] {
        let t = |term: &str| truth(GARDEN_TRUTH, &format!("{term}_class{class}"));
        let mut v = [0.0; 3];
        for (j, vj) in v.iter_mut().enumerate() {
            *vj = t("price") * self.price[j]
                + t("weeks") * self.weeks[j] as f64
                + t("peat_free") * self.peat_free[j] as f64;
        }
        v[1] += t("asc_plugs");
        v[2] += t("asc_potted");
        v
    }
}

/// Writes the panel (wide layout, one row per purchase occasion) to `path`.
pub fn garden(path: &Path, force: bool) -> Result<()> {
    let mut rng = Rng::new(20_261_205);
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); COLUMNS.len()];
    let mut choice = Vec::new();
    for shopper in 1..=1000 {
        let s = Shopper::draw(&mut rng);
        for occasion in 1..=8 {
            let o = Offer::draw(&mut rng);
            let c = pick(&mut rng, &o.utilities(s.class), &[true; 3]);
            choice.push(GARDEN_ALTERNATIVES[c].to_string());
            // In COLUMNS order; the choice's place holds nothing.
            let row = [
                shopper as f64,
                occasion as f64,
                0.0,
                o.price[0],
                o.weeks[0] as f64,
                o.price[1],
                o.weeks[1] as f64,
                o.peat_free[1] as f64,
                o.price[2],
                o.weeks[2] as f64,
                o.peat_free[2] as f64,
                s.garden_size,
                s.age as f64,
            ];
            for (col, x) in cols.iter_mut().zip(row) {
                col.push(x);
            }
        }
    }
    let mut out = Vec::new();
    for (name, col) in COLUMNS.iter().zip(cols) {
        let values = if *name == "choice" {
            Values::Text(std::mem::take(&mut choice))
        } else if name.ends_with("price") || *name == "garden_size" {
            Values::Num(col)
        } else {
            Values::Int(col.iter().map(|x| *x as i64).collect())
        };
        out.push((name.to_string(), values));
    }
    table(path, force, &out)
}
