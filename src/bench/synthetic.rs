//! The benchmark's synthetic data: a wide choice data set simulated from
//! known logit (or nested logit) parameters with a fixed seed, its spec, and
//! the true values the fit is compared with. Invented data.

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result};
use crate::rng::Rng;

/// Alternatives of the simulated choice (the first is the base).
pub(crate) const ALTS: [&str; 5] = ["a1", "a2", "a3", "a4", "a5"];

/// Seed of the simulated data.
pub const SEED: u64 = 20_251_201;

/// The simulated model.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Model {
    /// 4 constants, 3 shared attributes (a column per alternative), 2
    /// characteristics on the 4 non-base alternatives: 15 parameters.
    Full,
    /// 4 constants and the 2 characteristics only: 12 parameters.
    Characteristics,
    /// The full model as a nested logit: a2 and a3 in one nest, a4 and a5 in
    /// another, a1 alone; choices drawn from the nested process: 17 parameters.
    Nested,
}

/// The nested model's nests: (alternative indices, scale name, true scale).
const NESTS: [(&[usize], &str, f64); 2] =
    [(&[1, 2], "lambda_near", 0.6), (&[3, 4], "lambda_far", 0.75)];

impl Model {
    pub fn label(self) -> &'static str {
        match self {
            Model::Full => "full",
            Model::Characteristics => "characteristics",
            Model::Nested => "nested",
        }
    }
    pub(crate) fn attributes(self) -> &'static [Attr] {
        match self {
            Model::Full | Model::Nested => &ATTRS,
            Model::Characteristics => &[],
        }
    }
}

/// A simulated attribute: uniform on `low..high` (alternative j adds `shift * j`),
/// written with `decimals` digits; `beta` is its true coefficient.
pub(crate) struct Attr {
    pub(crate) name: &'static str,
    pub(crate) low: f64,
    pub(crate) high: f64,
    pub(crate) shift: f64,
    pub(crate) decimals: u32,
    pub(crate) beta: f64,
}

const ATTRS: [Attr; 3] = [
    Attr {
        name: "cost",
        low: 1.0,
        high: 9.0,
        shift: 0.5,
        decimals: 2,
        beta: -0.45,
    },
    Attr {
        name: "time",
        low: 5.0,
        high: 50.0,
        shift: -2.0,
        decimals: 1,
        beta: -0.035,
    },
    Attr {
        name: "rating",
        low: 1.0,
        high: 5.0,
        shift: 0.0,
        decimals: 1,
        beta: 0.30,
    },
];

/// True constants of a2..a5.
pub(crate) const ASC: [f64; 4] = [0.40, -0.30, 0.20, -0.50];
/// True income coefficients of a2..a5 (income in thousands, 10..120).
pub(crate) const INCOME: [f64; 4] = [0.010, -0.008, 0.005, 0.012];
/// True age coefficients of a2..a5 (age in years, 18..80).
pub(crate) const AGE: [f64; 4] = [-0.015, 0.010, 0.020, -0.005];

/// True value of each parameter, in the spec's parameter order.
pub fn truth(model: Model) -> Vec<(String, f64)> {
    let mut out: Vec<(String, f64)> = Vec::new();
    for (j, b) in ASC.iter().enumerate() {
        out.push((format!("asc_{}", ALTS[j + 1]), *b));
    }
    for a in model.attributes() {
        out.push((a.name.to_string(), a.beta));
    }
    for (j, b) in INCOME.iter().enumerate() {
        out.push((format!("income_{}", ALTS[j + 1]), *b));
    }
    for (j, b) in AGE.iter().enumerate() {
        out.push((format!("age_{}", ALTS[j + 1]), *b));
    }
    if model == Model::Nested {
        for (_, name, scale) in NESTS {
            out.push((name.to_string(), scale));
        }
    }
    out
}

/// The spec text for the simulated file `data_file` (relative to the spec).
pub fn spec_text(model: Model, data_file: &str) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Simulated by `sharecast bench` (invented data, seed {SEED}).\n\
         title = \"sharecast bench: {} model\"\n\n\
         [data]\nfile = \"{data_file}\"\nlayout = \"wide\"\nchoice = \"choice\"\n\n\
         [model]\nfamily = \"{}\"\nbase = \"a1\"\n",
        model.label(),
        if model == Model::Nested {
            "nested"
        } else {
            "logit"
        }
    );
    if model == Model::Nested {
        for (alts, name, _) in NESTS {
            let members: Vec<String> = alts.iter().map(|&a| format!("\"{}\"", ALTS[a])).collect();
            let nest = name.trim_start_matches("lambda_");
            let _ = writeln!(
                s,
                "[[nest]]\nname = \"{nest}\"\nalternatives = [{}]\n",
                members.join(", ")
            );
        }
    }
    for (j, a) in ALTS.iter().enumerate() {
        let _ = writeln!(s, "[alternatives.{a}]\ncode = {}\n", j + 1);
    }
    for a in model.attributes() {
        let cols: Vec<String> = ALTS
            .iter()
            .map(|alt| format!("{alt} = \"{}_{alt}\"", a.name))
            .collect();
        let _ = writeln!(
            s,
            "[[attribute]]\nname = \"{}\"\ncolumns = {{ {} }}\n",
            a.name,
            cols.join(", ")
        );
    }
    for c in ["income", "age"] {
        let _ = writeln!(s, "[[characteristic]]\nname = \"{c}\"\ncolumn = \"{c}\"\n");
    }
    s
}

/// Appends `scaled / 10^decimals` in fixed notation (exactly what the parser reads back).
fn push_fixed(buf: &mut Vec<u8>, scaled: i64, decimals: u32) {
    if scaled < 0 {
        buf.push(b'-');
    }
    let m = scaled.unsigned_abs();
    let p = 10u64.pow(decimals);
    let _ = write!(buf, "{}", m / p);
    if decimals > 0 {
        let _ = write!(buf, ".{:0width$}", m % p, width = decimals as usize);
    }
}

/// A uniform draw rounded to `decimals`: (value as written, scaled integer).
pub(crate) fn draw(rng: &mut Rng, low: f64, high: f64, decimals: u32) -> (f64, i64) {
    let p = 10f64.powi(decimals as i32);
    let scaled = ((low + (high - low) * rng.uniform()) * p).round() as i64;
    (scaled as f64 / p, scaled)
}

/// The alternative of `range` with the largest V/scale plus a Gumbel draw.
pub(crate) fn pick(
    rng: &mut Rng,
    v: &[f64],
    scale: f64,
    range: impl Iterator<Item = usize>,
) -> usize {
    let mut best = 0;
    let mut best_u = f64::NEG_INFINITY;
    for j in range {
        let u = v[j] / scale + rng.gumbel();
        if u > best_u {
            best_u = u;
            best = j;
        }
    }
    best
}

/// A draw from the nested model in its two stages: the group (a1 alone, then
/// the nests) by l I + Gumbel, I the log of the sum of exp(V/l) over the group,
/// then the alternative within it by V/l + Gumbel.
fn pick_nested(rng: &mut Rng, v: &[f64]) -> usize {
    let groups: [(&[usize], f64); 3] = [
        (&[0], 1.0),
        (NESTS[0].0, NESTS[0].2),
        (NESTS[1].0, NESTS[1].2),
    ];
    let mut best = 0;
    let mut best_u = f64::NEG_INFINITY;
    for (g, (alts, l)) in groups.iter().enumerate() {
        let iv = alts.iter().map(|&a| (v[a] / l).exp()).sum::<f64>().ln();
        let u = l * iv + rng.gumbel();
        if u > best_u {
            best_u = u;
            best = g;
        }
    }
    let (alts, l) = groups[best];
    pick(rng, v, l, alts.iter().copied())
}

/// Writes `n` simulated situations as a wide CSV, one row at a time (nothing of size n is held).
pub fn write_data(path: &Path, model: Model, n: usize) -> Result<()> {
    let file = std::fs::File::create(path).map_err(|e| Error::io(path, e))?;
    let mut w = std::io::BufWriter::with_capacity(1 << 20, file);
    let attrs = model.attributes();
    let mut header = String::from("id,choice,income,age");
    for a in attrs {
        for alt in ALTS {
            let _ = write!(header, ",{}_{alt}", a.name);
        }
    }
    header.push('\n');
    w.write_all(header.as_bytes())
        .map_err(|e| Error::io(path, e))?;
    let mut rng = Rng::new(SEED);
    let mut line: Vec<u8> = Vec::with_capacity(256);
    let mut x = vec![0.0; attrs.len() * ALTS.len()];
    let mut xs = vec![0i64; attrs.len() * ALTS.len()];
    for i in 0..n {
        let (income, income_s) = draw(&mut rng, 10.0, 120.0, 1);
        let age = (18 + rng.below(63)) as f64;
        for (a, at) in attrs.iter().enumerate() {
            for j in 0..ALTS.len() {
                let shift = at.shift * j as f64;
                let (v, s) = draw(&mut rng, at.low + shift, at.high + shift, at.decimals);
                x[a * ALTS.len() + j] = v;
                xs[a * ALTS.len() + j] = s;
            }
        }
        let mut v = [0.0; ALTS.len()];
        for (j, vj) in v.iter_mut().enumerate() {
            if j > 0 {
                *vj += ASC[j - 1] + INCOME[j - 1] * income + AGE[j - 1] * age;
            }
            for (a, at) in attrs.iter().enumerate() {
                *vj += at.beta * x[a * ALTS.len() + j];
            }
        }
        let best = if model == Model::Nested {
            pick_nested(&mut rng, &v)
        } else {
            pick(&mut rng, &v, 1.0, 0..ALTS.len())
        };
        line.clear();
        let _ = write!(line, "{},{},", i + 1, best + 1);
        push_fixed(&mut line, income_s, 1);
        let _ = write!(line, ",{age}");
        for (a, at) in attrs.iter().enumerate() {
            for j in 0..ALTS.len() {
                line.push(b',');
                push_fixed(&mut line, xs[a * ALTS.len() + j], at.decimals);
            }
        }
        line.push(b'\n');
        w.write_all(&line).map_err(|e| Error::io(path, e))?;
    }
    w.flush().map_err(|e| Error::io(path, e))
}

/// Writes `bench.csv` and `bench.toml` into `dir`; returns the spec's path.
pub fn write_set(dir: &Path, model: Model, n: usize) -> Result<PathBuf> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let data = dir.join("bench.csv");
    let spec = dir.join("bench.toml");
    write_data(&data, model, n)?;
    std::fs::write(&spec, spec_text(model, "bench.csv")).map_err(|e| Error::io(&spec, e))?;
    Ok(spec)
}
