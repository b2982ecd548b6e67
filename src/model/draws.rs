//! Simulation draws shared by the families that simulate their probabilities:
//! the `[simulation]` keys (draws per decision maker, sequence, seed) and the
//! uniform sequences — randomised Halton, modified Latin hypercube (MLHS) and
//! pseudo-random — laid out `[unit][dimension][draw]` so that a pass reads one
//! decision maker's draws of one dimension contiguously. The draws depend on
//! the seed and the number of units only, never on the number of threads.

use toml::{Table, Value};

use crate::rng::Rng;

/// Which uniform sequence the draws come from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Sequence {
    Halton,
    Mlhs,
    Pseudo,
}

impl Sequence {
    pub fn name(self) -> &'static str {
        match self {
            Sequence::Halton => "halton",
            Sequence::Mlhs => "mlhs",
            Sequence::Pseudo => "pseudo",
        }
    }
}

/// The `[simulation]` settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Simulation {
    /// Draws per decision maker (per situation for a per-situation simulator).
    pub draws: usize,
    pub sequence: Sequence,
    pub seed: u64,
}

impl Default for Simulation {
    fn default() -> Self {
        Simulation {
            draws: 500,
            sequence: Sequence::Halton,
            seed: 7,
        }
    }
}

/// The most draws per unit accepted (far beyond any practical need).
pub const MAX_DRAWS: usize = 100_000;
/// The most dimensions a Halton sequence is used for (primes up to 173);
/// beyond the sixth the digits are scrambled.
pub const MAX_HALTON_DIMENSIONS: usize = 40;
/// Halton dimensions used as they are; later ones get scrambled digits.
pub const PLAIN_HALTON_DIMENSIONS: usize = 6;
/// Simulation draws per decision maker in each parameter draw of a band
/// (and in the workbench's quick what-ifs on large data).
pub const BAND_DRAWS: usize = 50;
/// The most memory the stored draws may take.
pub const MAX_DRAW_BYTES: usize = 4 << 30;

impl Simulation {
    /// Reads `[simulation]` from a family's keys (defaults where absent).
    pub fn from_keys(keys: &Table) -> Result<Simulation, String> {
        let mut s = Simulation::default();
        let Some(v) = keys.get("simulation") else {
            return Ok(s);
        };
        let Value::Table(t) = v else {
            return Err("[simulation]: write it as a table ([simulation] with keys below)".into());
        };
        for (k, v) in t {
            match (k.as_str(), v) {
                ("draws", Value::Integer(n)) => {
                    if *n < 1 {
                        return Err(format!(
                            "[simulation].draws: at least 1 draw per decision maker, found {n}"
                        ));
                    }
                    if *n as u64 > MAX_DRAWS as u64 {
                        return Err(format!(
                            "[simulation].draws: {n} is more than the {MAX_DRAWS} accepted (a few hundred to a few thousand is usual)"
                        ));
                    }
                    s.draws = *n as usize;
                }
                ("sequence", Value::String(q)) => {
                    s.sequence = match q.as_str() {
                        "halton" => Sequence::Halton,
                        "mlhs" => Sequence::Mlhs,
                        "pseudo" => Sequence::Pseudo,
                        other => {
                            return Err(format!(
                                "[simulation].sequence: \"{other}\" is not known (use \"halton\", \"mlhs\" or \"pseudo\")"
                            ))
                        }
                    }
                }
                ("seed", Value::Integer(n)) if *n >= 0 => s.seed = *n as u64,
                ("draws", _) => return Err("[simulation].draws: give a whole number".into()),
                ("sequence", _) => return Err("[simulation].sequence: give a name".into()),
                ("seed", _) => {
                    return Err("[simulation].seed: give a whole number of 0 or more".into())
                }
                (other, _) => {
                    return Err(format!(
                        "[simulation]: unknown key `{other}` (it takes `draws`, `sequence` and `seed`)"
                    ))
                }
            }
        }
        Ok(s)
    }

    /// Checks that the sequence supports `dims` random dimensions (a check on
    /// the spec alone, which the family's spec rules run).
    pub fn check_dimensions(&self, dims: usize) -> Result<(), String> {
        if self.sequence == Sequence::Halton && dims > MAX_HALTON_DIMENSIONS {
            return Err(format!(
                "[simulation].sequence: the Halton sequence is used for at most {MAX_HALTON_DIMENSIONS} random dimensions and this model has {dims}; use sequence = \"mlhs\" or \"pseudo\""
            ));
        }
        Ok(())
    }

    /// Checks that `dims` dimensions over `units` units fit the sequence and
    /// memory; the message says what it would need.
    pub fn check_size(&self, units: usize, dims: usize) -> Result<(), String> {
        self.check_dimensions(dims)?;
        let bytes = (units as u128) * (dims as u128) * (self.draws as u128) * 8;
        if bytes > MAX_DRAW_BYTES as u128 {
            return Err(format!(
                "[simulation].draws: {} draws x {dims} dimensions x {units} decision makers would need {:.1} GB of memory for the draws, more than the {} GB allowed; use fewer draws",
                self.draws,
                bytes as f64 / 1e9,
                MAX_DRAW_BYTES >> 30
            ));
        }
        Ok(())
    }

    /// Uniform draws in (0, 1), `[unit][dimension][draw]`.
    pub fn uniforms(&self, units: usize, dims: usize) -> Vec<f64> {
        self.uniforms_from(0, units, dims)
    }

    /// The draws of units `first..first + units` of a longer run of units:
    /// the same numbers `uniforms(first + units, dims)` gives them. The Halton
    /// sequence starts at the unit's place; the others run their generator
    /// past the earlier units' draws (time in proportion to `first`).
    pub fn uniforms_from(&self, first: usize, units: usize, dims: usize) -> Vec<f64> {
        let r = self.draws;
        let mut out: Vec<f64>;
        let mut rng = Rng::new(self.seed ^ 0x5eed_d4a3_u64);
        match self.sequence {
            Sequence::Halton => {
                // Each dimension's shift (and digit permutation) from the seed,
                // then the decision makers' rows over the cores.
                let dims_setup: Vec<(u64, f64, Option<Vec<u64>>)> = (0..dims)
                    .map(|d| {
                        let base = PRIMES[d % PRIMES.len()];
                        let shift = rng.uniform();
                        let perm = (d >= PLAIN_HALTON_DIMENSIONS)
                            .then(|| digit_permutation(base, &mut rng));
                        (base, shift, perm)
                    })
                    .collect();
                let per_unit = dims * r;
                out = vec![0.0; units * per_unit];
                let mut items = Vec::new();
                let mut rest = out.as_mut_slice();
                for range in crate::design::heavy_pieces(units, 256) {
                    let (a, b) = rest.split_at_mut((range.len() * per_unit).min(rest.len()));
                    items.push((range, a));
                    rest = b;
                }
                crate::design::run_queue(items, |(range, chunk)| {
                    for (n, unit) in range.zip(chunk.chunks_mut(per_unit.max(1))) {
                        for (d, (base, shift, perm)) in dims_setup.iter().enumerate() {
                            for (k, x) in unit[d * r..(d + 1) * r].iter_mut().enumerate() {
                                let index = ((first + n) * r + k + 1) as u64;
                                let h = match perm {
                                    None => halton(*base, index),
                                    Some(p) => scrambled_halton(*base, index, p),
                                };
                                *x = open_unit((h + shift).fract());
                            }
                        }
                    }
                });
            }
            Sequence::Mlhs => {
                let mut skip = vec![0.0; r];
                for _ in 0..first * dims {
                    mlhs(&mut rng, &mut skip);
                }
                out = vec![0.0; units * dims * r];
                for n in 0..units {
                    for d in 0..dims {
                        let row = &mut out[(n * dims + d) * r..(n * dims + d + 1) * r];
                        mlhs(&mut rng, row);
                    }
                }
            }
            Sequence::Pseudo => {
                for _ in 0..first * dims * r {
                    rng.uniform();
                }
                out = vec![0.0; units * dims * r];
                for x in out.iter_mut() {
                    *x = open_unit(rng.uniform());
                }
            }
        }
        out
    }
}

/// Keeps a draw strictly inside (0, 1), where the normal quantile is finite.
fn open_unit(u: f64) -> f64 {
    u.clamp(1e-15, 1.0 - 1e-15)
}

/// The first primes, one per Halton dimension.
const PRIMES: [u64; MAX_HALTON_DIMENSIONS] = [
    2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83, 89, 97,
    101, 103, 107, 109, 113, 127, 131, 137, 139, 149, 151, 157, 163, 167, 173,
];

/// The radical inverse of `index` in `base`: its digits mirrored about the
/// point (the `index`-th element of the Halton sequence in that base).
pub fn halton(base: u64, mut index: u64) -> f64 {
    let mut f = 1.0;
    let mut h = 0.0;
    let b = base as f64;
    while index > 0 {
        f /= b;
        h += f * (index % base) as f64;
        index /= base;
    }
    h
}

/// The radical inverse with each digit d replaced by `perm[d]` (perm[0] = 0,
/// so the trailing zeros stay zero): a scrambled Halton element.
pub fn scrambled_halton(base: u64, mut index: u64, perm: &[u64]) -> f64 {
    let mut f = 1.0;
    let mut h = 0.0;
    let b = base as f64;
    while index > 0 {
        f /= b;
        h += f * perm[(index % base) as usize] as f64;
        index /= base;
    }
    h
}

/// A random permutation of the digits 1..base-1, keeping 0 in place.
fn digit_permutation(base: u64, rng: &mut Rng) -> Vec<u64> {
    let mut p: Vec<u64> = (0..base).collect();
    for i in (2..base as usize).rev() {
        let j = 1 + rng.below(i);
        p.swap(i, j);
    }
    p
}

/// Modified Latin hypercube draws of one unit and dimension: the points
/// (k + xi) / R for k = 0..R-1 with one uniform shift xi, in a random order.
pub fn mlhs(rng: &mut Rng, row: &mut [f64]) {
    let r = row.len();
    let xi = rng.uniform();
    for (k, x) in row.iter_mut().enumerate() {
        *x = open_unit((k as f64 + xi) / r as f64);
    }
    for i in (1..r).rev() {
        let j = rng.below(i + 1);
        row.swap(i, j);
    }
}

/// The spec with `[simulation].seed` set to `seed` (for a second fit on other draws).
pub fn reseeded(spec: &crate::spec::Spec, seed: u64) -> crate::spec::Spec {
    let mut s = spec.clone();
    let entry = s
        .family_keys
        .entry("simulation")
        .or_insert_with(|| Value::Table(Table::new()));
    if let Value::Table(t) = entry {
        t.insert(
            "seed".into(),
            Value::Integer(seed.min(i64::MAX as u64) as i64),
        );
    }
    s
}

/// The seed a spec's `[simulation]` gives (the default when absent or unreadable).
pub fn seed_of(spec: &crate::spec::Spec) -> u64 {
    Simulation::from_keys(&spec.family_keys)
        .unwrap_or_default()
        .seed
}

/// Values a simulating family builds once per data set (its draws), found
/// again by the data set's observations; entries of dropped data sets go.
#[derive(Debug)]
pub struct PerData<T>(
    std::sync::Mutex<
        Vec<(
            std::sync::Weak<crate::data::Observations>,
            std::sync::Arc<T>,
        )>,
    >,
);

impl<T> Default for PerData<T> {
    fn default() -> Self {
        PerData(std::sync::Mutex::new(Vec::new()))
    }
}

impl<T> PerData<T> {
    /// The value for `obs`, built by `build` the first time.
    pub fn get_or_build(
        &self,
        obs: &std::sync::Arc<crate::data::Observations>,
        build: impl FnOnce() -> T,
    ) -> std::sync::Arc<T> {
        let mut cache = match self.0.lock() {
            Ok(c) => c,
            Err(poisoned) => poisoned.into_inner(),
        };
        cache.retain(|(w, _)| w.strong_count() > 0);
        if let Some((_, p)) = cache
            .iter()
            .find(|(w, _)| w.upgrade().is_some_and(|o| std::sync::Arc::ptr_eq(&o, obs)))
        {
            return p.clone();
        }
        let p = std::sync::Arc::new(build());
        cache.push((std::sync::Arc::downgrade(obs), p.clone()));
        p
    }
}
