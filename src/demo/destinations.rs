//! The destination-choice demo in the invented city of Velmora: 320 zones
//! (`velmora_zones.csv`), the origin-destination pairs with their distance
//! and travel time (`velmora_skims.parquet`, a pair left out where the time
//! exceeds 75 minutes) and 4,000 trips, each choosing one zone out of all the
//! reachable, open ones (`velmora_trips.csv`).
//!
//! The zones lie on a plane of about 20 x 16 km: a dense `centre` in the
//! middle holding most of the jobs and shops, an `old_town` ring around it
//! and four outer districts (`north`, `east`, `west` and `riverside`, the
//! last across a river from the rest) where most people live. Three zones
//! are closed for redevelopment (`available` = 0): nobody chooses them. Each
//! trip starts in a zone drawn in proportion to its homes, has a purpose
//! (work, shop, other) and goes to the zone with the largest utility plus a
//! Gumbel draw, the utilities those of `DESTINATIONS_TRUTH` (no constants).

use std::path::Path;

use super::{pick, round, truth};
use crate::data::write::{table, Values};
use crate::error::Result;
use crate::rng::Rng;

/// True parameters of the destination choice, utility of zone j for a trip
/// from zone o: `time * time_min + time_shop * time_min * shop + jobs_work *
/// log_jobs * work + shops_shop * log_shops * shop + homes_other * log_homes *
/// other + mix * mix + intrazonal * intrazonal` (work, shop, other the
/// purpose's dummies; no constants).
pub const DESTINATIONS_TRUTH: &[(&str, f64)] = &[
    ("time", -0.085),
    ("time_shop", -0.045),
    ("jobs_work", 0.95),
    ("shops_shop", 0.85),
    ("homes_other", 0.70),
    ("mix", 0.60),
    ("intrazonal", 0.45),
];

/// Pairs slower than this many minutes are left out of the skims.
const MAX_MINUTES: f64 = 75.0;

/// The city's centre on the plane (km).
const MIDDLE: (f64, f64) = (10.0, 8.0);

/// The districts with their numbers of zones, in the order of the zone ids.
const DISTRICTS: [(&str, usize); 6] = [
    ("centre", 70),
    ("old_town", 45),
    ("north", 50),
    ("east", 50),
    ("west", 50),
    ("riverside", 55),
];

/// The river runs east-west at this y (km): `riverside` lies south of it.
const RIVER_Y: f64 = 4.2;

/// One zone as written to `velmora_zones.csv` (logs rounded as written).
struct Zone {
    district: &'static str,
    x: f64,
    y: f64,
    jobs: i64,
    shops: i64,
    homes: i64,
    mix: f64,
    log_jobs: f64,
    log_shops: f64,
    log_homes: f64,
    available: bool,
}

fn id(i: usize) -> String {
    format!("z{:03}", i + 1)
}

/// A count of at least 1 from a log-normal around exp(`mean`).
fn count(rng: &mut Rng, mean: f64, spread: f64) -> i64 {
    ((mean + spread * rng.normal()).exp().round() as i64).max(1)
}

/// Where a zone of `district` lies (km): the centre dense in the middle, the
/// old town a ring around it, the outer districts bands at the edges.
fn place(rng: &mut Rng, district: &str) -> (f64, f64) {
    let (u, w) = (rng.uniform(), rng.uniform());
    let around = |r: f64, a: f64| (MIDDLE.0 + r * a.cos(), MIDDLE.1 + r * a.sin());
    let turn = std::f64::consts::TAU;
    match district {
        "centre" => around(2.4 * u, turn * w),
        "old_town" => around(2.6 + 2.2 * u, turn * w),
        "north" => (4.0 + 12.0 * u, 12.3 + 3.5 * w),
        "east" => (14.6 + 5.2 * u, 2.0 + 9.8 * w),
        "west" => (0.3 + 5.2 * u, 2.0 + 9.8 * w),
        _ => (1.0 + 18.0 * u, 0.3 + 3.6 * w),
    }
}

fn zone(rng: &mut Rng, district: &'static str) -> Zone {
    let (x, y) = place(rng, district);
    let r = ((x - MIDDLE.0).powi(2) + (y - MIDDLE.1).powi(2)).sqrt();
    let jobs = count(rng, 7.0 - 0.38 * r, 0.6);
    let shops = count(rng, 4.8 - 0.34 * r, 0.7);
    let homes = count(rng, 5.2 + 0.06 * r, 0.6);
    let mix = round((0.78 - 0.05 * r + 0.12 * rng.normal()).clamp(0.02, 0.98), 3);
    Zone {
        district,
        x: round(x, 3),
        y: round(y, 3),
        jobs,
        shops,
        homes,
        mix,
        log_jobs: round((1.0 + jobs as f64).ln(), 6),
        log_shops: round((1.0 + shops as f64).ln(), 6),
        log_homes: round((1.0 + homes as f64).ln(), 6),
        available: true,
    }
}

/// The 320 zones, district by district, three of them closed.
fn zones(rng: &mut Rng) -> Vec<Zone> {
    let mut out = Vec::new();
    for (district, n) in DISTRICTS {
        for _ in 0..n {
            out.push(zone(rng, district));
        }
    }
    let mut closed = 0;
    while closed < 3 {
        let i = rng.below(out.len());
        if out[i].available {
            out[i].available = false;
            closed += 1;
        }
    }
    out
}

/// Distance and time of every pair (origin-major); `reach` false where the
/// time exceeds `MAX_MINUTES` (the pair is left out of the skims).
struct Skims {
    n: usize,
    dist: Vec<f64>,
    time: Vec<f64>,
    reach: Vec<bool>,
}

/// Minutes from `a` to `b` over `d` km: faster roads on longer trips, slow
/// streets at a centre or old-town end, the river's bridges, and noise.
fn minutes(rng: &mut Rng, a: &Zone, b: &Zone, d: f64) -> f64 {
    let speed = (12.0 + 0.7 * d).min(32.0);
    let slow = |z: &Zone| match z.district {
        "centre" => 3.0,
        "old_town" => 1.5,
        _ => 0.0,
    };
    let bridge = if (a.y < RIVER_Y) != (b.y < RIVER_Y) {
        6.0
    } else {
        0.0
    };
    let t = 2.0 + 60.0 * d / speed + slow(a) + slow(b) + bridge;
    round(t * (0.15 * rng.normal()).exp(), 2)
}

fn skims(rng: &mut Rng, zones: &[Zone]) -> Skims {
    let n = zones.len();
    let far = |a: &Zone, b: &Zone| ((a.x - b.x).powi(2) + (a.y - b.y).powi(2)).sqrt();
    let mut s = Skims {
        n,
        dist: vec![0.0; n * n],
        time: vec![0.0; n * n],
        reach: vec![false; n * n],
    };
    for (o, a) in zones.iter().enumerate() {
        // Within a zone: half the way to its nearest neighbour.
        let near = zones
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != o)
            .map(|(_, b)| far(a, b))
            .fold(f64::INFINITY, f64::min);
        for (j, b) in zones.iter().enumerate() {
            let d = if j == o { 0.5 * near } else { far(a, b) };
            let d = round((1.25 * d).max(0.15), 3);
            let t = minutes(rng, a, b, d);
            s.dist[o * n + j] = d;
            s.time[o * n + j] = t;
            s.reach[o * n + j] = t <= MAX_MINUTES || j == o;
        }
    }
    s
}

/// The trips' columns.
#[derive(Default)]
struct Trips {
    origin: Vec<String>,
    purpose: Vec<String>,
    dummies: [Vec<i64>; 3],
    dest: Vec<String>,
}

const PURPOSES: [&str; 3] = ["work", "shop", "other"];

/// An open zone drawn in proportion to its homes (`cum` their running sums).
fn origin(rng: &mut Rng, cum: &[f64]) -> usize {
    let total = cum.last().copied().unwrap_or(0.0);
    let u = rng.uniform() * total;
    cum.partition_point(|c| *c <= u).min(cum.len() - 1)
}

/// The true utility of every zone for a trip from `o` with purpose `p`
/// (0 work, 1 shop, 2 other), into `v`; `avail` says which it may choose.
fn utilities(zones: &[Zone], s: &Skims, o: usize, p: usize, v: &mut [f64], avail: &mut [bool]) {
    let t = |n: &str| truth(DESTINATIONS_TRUTH, n);
    let dummy = |k: usize| (p == k) as u8 as f64;
    let per_minute = t("time") + t("time_shop") * dummy(1);
    for (j, z) in zones.iter().enumerate() {
        let k = o * s.n + j;
        avail[j] = z.available && s.reach[k];
        v[j] = per_minute * s.time[k]
            + t("jobs_work") * z.log_jobs * dummy(0)
            + t("shops_shop") * z.log_shops * dummy(1)
            + t("homes_other") * z.log_homes * dummy(2)
            + t("mix") * z.mix
            + t("intrazonal") * (j == o) as u8 as f64;
    }
}

fn trips(rng: &mut Rng, zones: &[Zone], s: &Skims) -> Trips {
    let mut cum = Vec::with_capacity(zones.len());
    let mut sum = 0.0;
    for z in zones {
        sum += if z.available { z.homes as f64 } else { 0.0 };
        cum.push(sum);
    }
    let mut out = Trips::default();
    let mut v = vec![0.0; zones.len()];
    let mut avail = vec![false; zones.len()];
    for _ in 0..4000 {
        let o = origin(rng, &cum);
        let u = rng.uniform();
        let p = if u < 0.45 {
            0
        } else if u < 0.75 {
            1
        } else {
            2
        };
        utilities(zones, s, o, p, &mut v, &mut avail);
        let c = pick(rng, &v, &avail);
        out.origin.push(id(o));
        out.purpose.push(PURPOSES[p].to_string());
        for (k, d) in out.dummies.iter_mut().enumerate() {
            d.push((k == p) as i64);
        }
        out.dest.push(id(c));
    }
    out
}

fn write_zones(path: &Path, force: bool, zones: &[Zone]) -> Result<()> {
    let num = |f: fn(&Zone) -> f64| Values::Num(zones.iter().map(f).collect());
    let int = |f: fn(&Zone) -> i64| Values::Int(zones.iter().map(f).collect());
    let out = vec![
        (
            "zone".to_string(),
            Values::Text((0..zones.len()).map(id).collect()),
        ),
        (
            "district".to_string(),
            Values::Text(zones.iter().map(|z| z.district.to_string()).collect()),
        ),
        ("x".to_string(), num(|z| z.x)),
        ("y".to_string(), num(|z| z.y)),
        ("jobs".to_string(), int(|z| z.jobs)),
        ("shops".to_string(), int(|z| z.shops)),
        ("homes".to_string(), int(|z| z.homes)),
        ("mix".to_string(), num(|z| z.mix)),
        ("log_jobs".to_string(), num(|z| z.log_jobs)),
        ("log_shops".to_string(), num(|z| z.log_shops)),
        ("log_homes".to_string(), num(|z| z.log_homes)),
        ("available".to_string(), int(|z| z.available as i64)),
    ];
    table(path, force, &out)
}

fn write_skims(path: &Path, force: bool, s: &Skims) -> Result<()> {
    let (mut origin, mut zone, mut dist, mut time, mut intra) =
        (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for o in 0..s.n {
        for j in 0..s.n {
            let k = o * s.n + j;
            if s.reach[k] {
                origin.push(id(o));
                zone.push(id(j));
                dist.push(s.dist[k]);
                time.push(s.time[k]);
                intra.push((j == o) as i64);
            }
        }
    }
    let out = vec![
        ("origin".to_string(), Values::Text(origin)),
        ("zone".to_string(), Values::Text(zone)),
        ("dist_km".to_string(), Values::Num(dist)),
        ("time_min".to_string(), Values::Num(time)),
        ("intrazonal".to_string(), Values::Int(intra)),
    ];
    table(path, force, &out)
}

fn write_trips(path: &Path, force: bool, t: Trips) -> Result<()> {
    let [work, shop, other] = t.dummies;
    let n = t.dest.len() as i64;
    let out = vec![
        ("trip_id".to_string(), Values::Int((1..=n).collect())),
        ("origin".to_string(), Values::Text(t.origin)),
        ("purpose".to_string(), Values::Text(t.purpose)),
        ("work".to_string(), Values::Int(work)),
        ("shop".to_string(), Values::Int(shop)),
        ("other".to_string(), Values::Int(other)),
        ("dest".to_string(), Values::Text(t.dest)),
    ];
    table(path, force, &out)
}

/// Writes `velmora_zones.csv`, `velmora_skims.parquet` and `velmora_trips.csv`
/// into `dir`.
pub fn destinations(dir: &Path, force: bool) -> Result<()> {
    let mut rng = Rng::new(20_261_206);
    let zones = zones(&mut rng);
    let skims = skims(&mut rng, &zones);
    let trips = trips(&mut rng, &zones, &skims);
    write_zones(&dir.join("velmora_zones.csv"), force, &zones)?;
    write_skims(&dir.join("velmora_skims.parquet"), force, &skims)?;
    write_trips(&dir.join("velmora_trips.csv"), force, trips)
}
