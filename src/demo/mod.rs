//! The invented demo data sets, simulated from known parameters with a fixed
//! seed: commute mode choice in the invented city of Velmora (wide CSV) and
//! product choice at the invented Larkspur Market grocery (long Parquet),
//! delivery ratings (ordered), a stated-choice express survey (`express`), a
//! panel of bedding-plant purchases by two hidden segments (`garden`) and
//! destination choice over Velmora's zones (`destinations`).
//! `demo-data/README.md` lists the true parameters written here.

mod destinations;
mod express;
mod garden;

use std::path::Path;

pub use destinations::{destinations, DESTINATIONS_TRUTH};
pub use express::{express, EXPRESS_TRUTH};
pub use garden::{garden, GARDEN_ALTERNATIVES, GARDEN_SHARES, GARDEN_TRUTH};

use crate::data::write::{table, Values};
use crate::error::Result;
use crate::rng::Rng;

/// True parameters of the commute demo (utility per unit of each variable).
pub const COMMUTE_TRUTH: &[(&str, f64)] = &[
    ("asc_bus", -0.6),
    ("asc_rail", -0.3),
    ("asc_bike", -1.0),
    ("asc_walk", 0.8),
    ("cost", -0.30),
    ("time", -0.040),
    ("wait", -0.070),
    ("access", -0.55),
    ("income_bus", -0.012),
    ("income_rail", 0.004),
    ("income_bike", -0.006),
    ("income_walk", -0.010),
    ("age_bike", -0.030),
    ("age_walk", -0.012),
    ("lambda_transit", 0.5),
    ("lambda_active", 0.6),
];

/// The commute demo's nests (alternative indices: car 0, bus 1, rail 2, bike 3,
/// walk 4) and the names of their scales; car stands alone.
const COMMUTE_NESTS: [(&[usize], &str); 3] = [
    (&[0], ""),
    (&[1, 2], "lambda_transit"),
    (&[3, 4], "lambda_active"),
];

/// True parameters of the grocery demo.
pub const GROCERY_TRUTH: &[(&str, f64)] = &[
    ("asc_quillfield", 0.25),
    ("asc_marrowby", -0.15),
    ("asc_fennick", 0.40),
    ("asc_own_label", -0.30),
    ("price", -1.6),
    ("promo", 0.55),
    ("eye_level", 0.35),
    ("income_quillfield", 0.004),
    ("income_marrowby", 0.002),
    ("income_fennick", 0.009),
    ("income_own_label", -0.012),
    ("size_quillfield", 0.05),
    ("size_marrowby", -0.04),
    ("size_fennick", 0.02),
    ("size_own_label", 0.12),
];

fn truth(table: &[(&str, f64)], name: &str) -> f64 {
    table
        .iter()
        .find(|t| t.0 == name)
        .map(|t| t.1)
        .unwrap_or(0.0)
}

fn round(x: f64, digits: i32) -> f64 {
    let m = 10f64.powi(digits);
    (x * m).round() / m
}

/// Picks the alternative with the largest utility plus a Gumbel draw among the available ones.
fn pick(rng: &mut Rng, v: &[f64], avail: &[bool]) -> usize {
    let mut best = 0;
    let mut best_u = f64::NEG_INFINITY;
    for j in 0..v.len() {
        if avail[j] {
            let u = v[j] + rng.gumbel();
            if u > best_u {
                best_u = u;
                best = j;
            }
        }
    }
    best
}

/// A draw from the nested logit by its two stages, each a Gumbel argmax: the
/// nest by l_k I_k (I_k the log of the sum of exp(V_j / l_k) over its available
/// alternatives), then the alternative within it by V_j / l_k. This is the
/// nested logit's sequential form (Train, Discrete Choice Methods with
/// Simulation, 2nd ed., ch. 4.2.3), written apart from the estimator's code.
fn pick_nested(rng: &mut Rng, v: &[f64], avail: &[bool], nests: &[(&[usize], f64)]) -> usize {
    let mut best_nest = None;
    let mut best_u = f64::NEG_INFINITY;
    for (k, (alts, lam)) in nests.iter().enumerate() {
        let open: Vec<usize> = alts.iter().copied().filter(|&a| avail[a]).collect();
        if open.is_empty() {
            continue;
        }
        let m = open.iter().map(|&a| v[a]).fold(f64::NEG_INFINITY, f64::max);
        let iv = m / lam
            + open
                .iter()
                .map(|&a| ((v[a] - m) / lam).exp())
                .sum::<f64>()
                .ln();
        let u = lam * iv + rng.gumbel();
        if u > best_u {
            best_u = u;
            best_nest = Some(k);
        }
    }
    let Some(k) = best_nest else { return 0 };
    let (alts, lam) = nests[k];
    let scaled: Vec<f64> = v.iter().map(|x| x / lam).collect();
    let mask: Vec<bool> = (0..v.len())
        .map(|a| avail[a] && alts.contains(&a))
        .collect();
    pick(rng, &scaled, &mask)
}

/// The commute demo's columns, in the file's order (`mode` follows `person_id`).
const COMMUTE_COLUMNS: [&str; 22] = [
    "trip_id",
    "person_id",
    "district",
    "income",
    "age",
    "has_car",
    "distance_km",
    "car_cost",
    "car_time",
    "bus_fare",
    "bus_time",
    "bus_wait",
    "bus_access_km",
    "rail_fare",
    "rail_time",
    "rail_wait",
    "rail_access_km",
    "bike_time",
    "walk_time",
    "bike_ok",
    "walk_ok",
    "expansion",
];

/// Velmora commute trips: 2,000 residents, 3 trips each, wide layout; choices
/// from a nested logit (transit: bus and rail; active: bike and walk).
pub fn commute(path: &Path, force: bool) -> Result<()> {
    let mut rng = Rng::new(20_261_201);
    let names = ["car", "bus", "rail", "bike", "walk"];
    let mut cols: Vec<(&str, Vec<f64>)> =
        COMMUTE_COLUMNS.iter().map(|n| (*n, Vec::new())).collect();
    let mut mode = Vec::new();
    let mut trip = 0;
    for person in 1..=2000 {
        let resident = Resident::draw(&mut rng, person);
        for _ in 0..3 {
            trip += 1;
            let (row, c) = commute_trip(&mut rng, &resident, trip);
            mode.push(names[c].to_string());
            for (col, x) in cols.iter_mut().zip(row) {
                col.1.push(x);
            }
        }
    }
    let ints = [
        "trip_id",
        "person_id",
        "district",
        "age",
        "has_car",
        "bike_ok",
        "walk_ok",
    ];
    let mut out: Vec<(String, Values)> = Vec::new();
    for (name, v) in cols {
        let values = if ints.contains(&name) {
            Values::Int(v.iter().map(|x| *x as i64).collect())
        } else {
            Values::Num(v)
        };
        out.push((name.to_string(), values));
        if name == "person_id" {
            out.push(("mode".to_string(), Values::Text(mode.clone())));
        }
    }
    table(path, force, &out)
}

/// A commute demo resident: what stays the same across their trips.
struct Resident {
    person: i32,
    district: usize,
    income: f64,
    age: f64,
    has_car: f64,
    expansion: f64,
}

impl Resident {
    fn draw(rng: &mut Rng, person: i32) -> Self {
        let district = 1 + rng.below(5);
        let income = round((3.4 + 0.45 * rng.normal()).exp(), 1); // thousands per year
        let age = 18.0 + rng.below(58) as f64;
        let has_car = (rng.uniform() < 0.35 + 0.006 * income.min(90.0)) as u8 as f64;
        let expansion = round(20.0 + 10.0 * rng.uniform() + 4.0 * district as f64, 2);
        Resident {
            person,
            district,
            income,
            age,
            has_car,
            expansion,
        }
    }
}

/// One commute trip: its row (in `COMMUTE_COLUMNS` order) and the chosen mode.
fn commute_trip(rng: &mut Rng, r: &Resident, trip: i32) -> ([f64; 22], usize) {
    let district = r.district;
    let d = round((1.6 + 0.7 * rng.normal()).exp().clamp(0.4, 40.0), 2);
    let car_time = round(4.0 + 1.7 * d * (1.0 + 0.2 * rng.uniform()), 1);
    let car_cost = round(0.22 * d + [1.0, 2.5, 4.0][rng.below(3)], 2);
    let bus_time = round(3.0 + 2.6 * d * (1.0 + 0.2 * rng.uniform()), 1);
    let bus_fare = round(1.2 + 0.08 * d, 2);
    let bus_wait = round(2.0 + 8.0 * rng.uniform(), 1);
    let bus_access = round(0.1 + 0.8 * rng.uniform(), 2);
    let rail_time = round(6.0 + 1.2 * d * (1.0 + 0.2 * rng.uniform()), 1);
    let rail_fare = round(1.8 + 0.12 * d, 2);
    let rail_wait = round(1.5 + 6.0 * rng.uniform(), 1);
    let rail_access = round(0.3 + 2.2 * rng.uniform() + 0.2 * district as f64, 2);
    let bike_time = round(d * 4.0, 1);
    let walk_time = round(d * 12.0, 1);
    let bike_ok = (d <= 15.0) as u8 as f64;
    let walk_ok = (d <= 5.0) as u8 as f64;
    let row = [
        trip as f64,
        r.person as f64,
        district as f64,
        r.income,
        r.age,
        r.has_car,
        d,
        car_cost,
        car_time,
        bus_fare,
        bus_time,
        bus_wait,
        bus_access,
        rail_fare,
        rail_time,
        rail_wait,
        rail_access,
        bike_time,
        walk_time,
        bike_ok,
        walk_ok,
        r.expansion,
    ];
    let avail = [r.has_car == 1.0, true, true, bike_ok == 1.0, walk_ok == 1.0];
    let t = |n: &str| truth(COMMUTE_TRUTH, n);
    let nests: Vec<(&[usize], f64)> = COMMUTE_NESTS
        .iter()
        .map(|(alts, scale)| (*alts, if scale.is_empty() { 1.0 } else { t(scale) }))
        .collect();
    let c = pick_nested(rng, &commute_utilities(&row), &avail, &nests);
    (row, c)
}

/// The true utilities of the five modes on one trip's row.
fn commute_utilities(row: &[f64; 22]) -> [f64; 5] {
    let t = |n: &str| truth(COMMUTE_TRUTH, n);
    let x = |n: &str| {
        COMMUTE_COLUMNS
            .iter()
            .position(|c| *c == n)
            .map_or(0.0, |i| row[i])
    };
    let (income, age) = (x("income"), x("age"));
    [
        t("cost") * x("car_cost") + t("time") * x("car_time"),
        t("asc_bus")
            + t("cost") * x("bus_fare")
            + t("time") * x("bus_time")
            + t("wait") * x("bus_wait")
            + t("access") * x("bus_access_km")
            + t("income_bus") * income,
        t("asc_rail")
            + t("cost") * x("rail_fare")
            + t("time") * x("rail_time")
            + t("wait") * x("rail_wait")
            + t("access") * x("rail_access_km")
            + t("income_rail") * income,
        t("asc_bike")
            + t("time") * x("bike_time")
            + t("income_bike") * income
            + t("age_bike") * age,
        t("asc_walk")
            + t("time") * x("walk_time")
            + t("income_walk") * income
            + t("age_walk") * age,
    ]
}

/// The grocery demo's columns, one row per purchase and available brand.
#[derive(Default)]
struct Purchases {
    purchase: Vec<i64>,
    household: Vec<i64>,
    week: Vec<i64>,
    brand: Vec<String>,
    price: Vec<f64>,
    promo: Vec<i64>,
    eye: Vec<i64>,
    income: Vec<f64>,
    size: Vec<i64>,
    chosen: Vec<i64>,
}

const BRANDS: [&str; 5] = [
    "brambleton",
    "quillfield",
    "marrowby",
    "fennick",
    "own_label",
];

/// Larkspur Market purchases of one item: 8,000 purchases by 1,600 households, long layout.
pub fn grocery(path: &Path, force: bool) -> Result<()> {
    let mut rng = Rng::new(7_041_990);
    let mut rows = Purchases::default();
    let mut id = 0i64;
    for h in 1..=1600i64 {
        let inc = round((3.5 + 0.5 * rng.normal()).exp(), 1);
        let hsize = 1 + rng.below(5) as i64;
        for _ in 0..5 {
            id += 1;
            purchase(&mut rng, &mut rows, (id, h, inc, hsize));
        }
    }
    let out = vec![
        ("purchase_id".to_string(), Values::Int(rows.purchase)),
        ("household_id".to_string(), Values::Int(rows.household)),
        ("week".to_string(), Values::Int(rows.week)),
        ("brand".to_string(), Values::Text(rows.brand)),
        ("price".to_string(), Values::Num(rows.price)),
        ("promo".to_string(), Values::Int(rows.promo)),
        ("eye_level".to_string(), Values::Int(rows.eye)),
        ("income".to_string(), Values::Num(rows.income)),
        ("household_size".to_string(), Values::Int(rows.size)),
        ("chosen".to_string(), Values::Int(rows.chosen)),
    ];
    table(path, force, &out)
}

/// One purchase (id, household, its income and size): the shelf that week and
/// the brand bought, a row per brand in stock.
fn purchase(rng: &mut Rng, out: &mut Purchases, (id, h, inc, hsize): (i64, i64, f64, i64)) {
    let t = |n: &str| truth(GROCERY_TRUTH, n);
    let list_price = [3.20, 3.45, 2.90, 3.80, 2.30];
    let wk = 1 + rng.below(52) as i64;
    let mut avail = [true; 5];
    for a in avail.iter_mut() {
        *a = rng.uniform() > 0.06; // stock-outs
    }
    if avail.iter().all(|a| !a) {
        avail[4] = true;
    }
    let mut rows = Vec::new();
    let mut v = [0.0; 5];
    for j in 0..5 {
        let on_promo = (rng.uniform() < 0.15) as u8 as f64;
        let p = round(
            list_price[j] * (1.0 - 0.2 * on_promo) * (0.95 + 0.1 * rng.uniform()),
            2,
        );
        let e = (rng.uniform() < 0.4) as u8 as f64;
        let name = BRANDS[j];
        v[j] = if j == 0 {
            0.0
        } else {
            t(&format!("asc_{name}"))
        } + t("price") * p
            + t("promo") * on_promo
            + t("eye_level") * e
            + t(&format!("income_{name}")) * inc
            + t(&format!("size_{name}")) * hsize as f64;
        rows.push((p, on_promo, e));
    }
    let c = pick(rng, &v, &avail);
    for j in 0..5 {
        if !avail[j] {
            continue; // a stock-out: no row, so the brand is unavailable
        }
        out.purchase.push(id);
        out.household.push(h);
        out.week.push(wk);
        out.brand.push(BRANDS[j].to_string());
        out.price.push(rows[j].0);
        out.promo.push(rows[j].1 as i64);
        out.eye.push(rows[j].2 as i64);
        out.income.push(inc);
        out.size.push(hsize);
        out.chosen.push((j == c) as i64);
    }
}

/// True parameters of the delivery-ratings demo: the latent satisfaction's
/// coefficients and the cut-points above each rating but the top one.
pub const RATINGS_TRUTH: &[(&str, f64)] = &[
    ("wait_minutes", -0.045),
    ("order_items", 0.09),
    ("first_time", -0.55),
    ("weekday", 0.30),
    ("cut_very_poor", -3.6),
    ("cut_poor", -2.3),
    ("cut_fair", -0.9),
    ("cut_good", 0.7),
];

/// Ratings 1-5 of home deliveries by the invented Hollyhock Bakehouse: 2,500
/// orders, an ordered logit (the latent satisfaction plus a logistic draw,
/// cut at the true cut-points).
pub fn ratings(path: &Path, force: bool) -> Result<()> {
    let t = |n: &str| truth(RATINGS_TRUTH, n);
    let cuts = [
        t("cut_very_poor"),
        t("cut_poor"),
        t("cut_fair"),
        t("cut_good"),
    ];
    let mut rng = Rng::new(20_261_202);
    let (mut id, mut rating, mut wait, mut items, mut first, mut weekday, mut branch) = (
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
    );
    for order in 1..=2500 {
        let w = round(12.0 + 55.0 * rng.uniform() + 8.0 * rng.normal().abs(), 0);
        let n = 1 + rng.below(12) as i64;
        let f = (rng.uniform() < 0.3) as i64;
        let wd = (rng.below(7) < 5) as i64;
        let index = t("wait_minutes") * w
            + t("order_items") * n as f64
            + t("first_time") * f as f64
            + t("weekday") * wd as f64;
        let u = rng.uniform().clamp(1e-12, 1.0 - 1e-12);
        let latent = index + (u / (1.0 - u)).ln();
        let r = 1 + cuts.iter().filter(|c| latent > **c).count() as i64;
        id.push(order);
        rating.push(r);
        wait.push(w);
        items.push(n);
        first.push(f);
        weekday.push(wd);
        branch.push(["north", "river", "market"][rng.below(3)].to_string());
    }
    let out = vec![
        ("order_id".to_string(), Values::Int(id)),
        ("branch".to_string(), Values::Text(branch)),
        ("rating".to_string(), Values::Int(rating)),
        ("wait_minutes".to_string(), Values::Num(wait)),
        ("order_items".to_string(), Values::Int(items)),
        ("first_time".to_string(), Values::Int(first)),
        ("weekday".to_string(), Values::Int(weekday)),
    ];
    table(path, force, &out)
}

/// Writes the six demo sets into `dir` (the destination demo's three files).
pub fn write_all(dir: &Path, force: bool) -> Result<()> {
    commute(&dir.join("commute.csv"), force)?;
    grocery(&dir.join("grocery.parquet"), force)?;
    ratings(&dir.join("ratings.csv"), force)?;
    express(&dir.join("express_survey.csv"), force)?;
    garden(&dir.join("garden_panel.csv"), force)?;
    destinations(dir, force)
}
