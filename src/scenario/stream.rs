//! Forecasts over a population read in chunks (`data::stream`): each chunk is
//! enumerated as a data set of its own — the point pass, then every parameter
//! draw of the bands, drawn once for the whole file — and its weighted sums
//! (shares, switching, segments, revenue, stranded demand) are added to the
//! population's; the shares are the sums divided by the population's weight
//! at the end. The next chunk is read on another thread while one is
//! forecast: at most two are held at a time.

use std::collections::{HashMap, HashSet};
use std::hash::{Hash, Hasher};
use std::path::Path;
use std::sync::Arc;

use super::prepare::{self, Prepared};
use super::simulate::{self, Sums};
use super::{assemble, check, Figures, Forecast, Market, Options, Scenario, NO_BANDS};
use crate::analysis::delta::draws;
use crate::data::stream::{Chunk, Chunks};
use crate::data::table::{label_order, too_many_segments, MAX_SEGMENTS};
use crate::data::Dataset;
use crate::design::Design;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::model::Family;
use crate::progress::{self, Phase, QUIET};
use crate::spec::Spec;

/// The steps of the file's phase: thousandths of the file.
const PER_FILE: usize = 1000;

/// Called with each chunk's fit (its design and family), prepared scenario and
/// parameters, in file order: where per-situation rows are written.
pub type Sink<'a> = &'a mut dyn FnMut(&Fit, &Prepared, &[f64]) -> Result<()>;

/// The segments met so far, in the order they were met.
#[derive(Default)]
struct Segments {
    labels: Vec<String>,
    index: HashMap<String, usize>,
}

/// What the bands add up per parameter draw: base and scenario sums, and
/// the scenario sums of each segment (`[segment * m + alternative]`).
#[derive(Clone)]
struct DrawSums {
    base: Vec<f64>,
    scenario: Vec<f64>,
    segments: Vec<f64>,
}

/// The population's running sums.
struct Totals {
    point: Option<Sums>,
    draws: Vec<DrawSums>,
    segments: Segments,
    names: Vec<String>,
    situations: usize,
    weight: f64,
    stranded: usize,
    stranded_weight: f64,
    /// Decision makers before the next chunk (for families with draws).
    units: usize,
    /// Decision makers of earlier chunks (hashed keys), when their draws depend on it.
    seen: Option<HashSet<u64>>,
    /// Latent classes: running sums of each class's size and shares.
    classes: Vec<super::ClassForecast>,
}

/// Forecasts `scenario` over the population `chunks` reads, with the fit's
/// parameters; `sink` sees every chunk (per-situation exports).
pub fn forecast(
    spec: &Spec,
    fit: &Fit,
    chunks: &mut Chunks,
    scenario: &Scenario,
    opts: &Options,
    sink: Option<Sink>,
) -> Result<Forecast> {
    forecast_with(spec, fit, chunks, scenario, opts, sink, QUIET)
}

/// `forecast`, reporting the phase `forecast over the file` to `ticks`: the
/// thousandths of the file (its rows, or a CSV file's bytes) read and
/// forecast, a tick per chunk. The figures are the same with any `ticks`.
pub fn forecast_with(
    spec: &Spec,
    fit: &Fit,
    chunks: &mut Chunks,
    scenario: &Scenario,
    opts: &Options,
    mut sink: Option<Sink>,
    ticks: progress::Sink,
) -> Result<Forecast> {
    check(spec, fit, scenario, opts)?;
    if scenario.calibration.is_some() || spec.calibration.is_some() {
        return Err(Error::Usage(format!(
            "scenario `{}`: calibration targets need every situation of the population at once, and {} is read in chunks; calibrate over a file that fits in one chunk (raise --chunk-rows above its number of rows) or leave the targets out",
            scenario.name,
            chunks.path().display()
        )));
    }
    let beta = fit.beta.clone();
    let parameter_draws = match opts.draws {
        0 => None,
        n => Some(draws(fit, n, opts.seed)),
    };
    let mut template = fit.clone();
    template.baseline = Default::default();
    let mut t = Totals {
        point: None,
        draws: Vec::new(),
        segments: Segments::default(),
        names: Vec::new(),
        situations: 0,
        weight: 0.0,
        stranded: 0,
        stranded_weight: 0.0,
        units: 0,
        seen: (spec.data.group.is_some() && fit.family.at_unit(0).is_some()).then(HashSet::new),
        classes: Vec::new(),
    };
    let path = chunks.path().to_path_buf();
    let phase = Phase::start(ticks, "forecast over the file", PER_FILE);
    // The next chunk is read on another thread while this one is forecast
    // (at most two chunks are held); chunks are still taken in file order.
    std::thread::scope(|scope| -> Result<()> {
        let (tx, rx) = std::sync::mpsc::sync_channel::<(Result<Chunk>, usize)>(0);
        scope.spawn(move || {
            while let Some(next) = chunks.next_chunk().transpose() {
                let failed = next.is_err();
                let (at, total) = chunks.position();
                let done = (PER_FILE as f64 * at as f64 / total.max(1) as f64) as usize;
                // A closed channel: the forecast stopped at an error.
                if tx.send((next, done.min(PER_FILE))).is_err() || failed {
                    break;
                }
            }
        });
        let mut shown = 0;
        for (chunk, done) in rx {
            let draws = parameter_draws.as_ref().and_then(|d| d.as_deref());
            let (cfit, prep) = one_chunk(
                spec, fit, &template, chunk?, &path, scenario, opts, draws, &beta, &mut t,
            )?;
            if let Some(s) = sink.as_mut() {
                s(&cfit, &prep, &beta)?;
            }
            phase.advance(done.saturating_sub(shown));
            shown = shown.max(done);
        }
        Ok(())
    })?;
    phase.finish();
    finish(scenario, opts, parameter_draws, t, &path)
}

/// Checks that no decision maker of this chunk was met in an earlier one (their
/// draws would then differ from a pass over the whole file).
fn check_groups(spec: &Spec, table: &crate::data::Table, t: &mut Totals) -> Result<()> {
    let (Some(seen), Some(g)) = (t.seen.as_mut(), &spec.data.group) else {
        return Ok(());
    };
    let keys = table.keys(g, "[data].group")?;
    let mut mine = HashSet::new();
    for (r, k) in keys.iter().enumerate() {
        let mut h = std::collections::hash_map::DefaultHasher::new();
        k.hash(&mut h);
        let h = h.finish();
        if seen.contains(&h) {
            return Err(Error::data(
                &table.file,
                format!(
                    "column `{g}` ([data].group): decision maker `{k}` appears again at row {} after other decision makers' rows; reading the population in chunks needs each decision maker's rows together (sort the file by `{g}`, or raise --chunk-rows above its number of rows)",
                    table.offset + r + 1
                ),
            ));
        }
        mine.insert(h);
    }
    seen.extend(mine);
    Ok(())
}

#[allow(clippy::too_many_arguments)]
fn one_chunk(
    spec: &Spec,
    fit: &Fit,
    template: &Fit,
    chunk: Chunk,
    path: &Path,
    scenario: &Scenario,
    opts: &Options,
    parameter_draws: Option<&[Vec<f64>]>,
    beta: &[f64],
    t: &mut Totals,
) -> Result<(Fit, Prepared)> {
    let Dataset { obs, table } = chunk.ds;
    check_groups(spec, &table, t)?;
    let raw_total = obs.weight_total;
    let (cfit, factor) = chunk_fit(spec, fit, template, obs, path, t)?;
    let prep = prepare::prepare(spec, &cfit, &table, scenario)?;
    let m = prep.alternatives();
    if t.names.is_empty() {
        t.names = prep.names.clone();
    }
    // This chunk's segments, placed among the population's.
    let (seg, into) = match &opts.by {
        Some(c) => {
            let (index, labels) = table.segments(c, "--by segment column")?;
            let into = labels
                .iter()
                .map(|l| place(&mut t.segments, l, &table.file, c))
                .collect::<Result<Vec<usize>>>()?;
            (Some((index, labels)), Some(into))
        }
        None => (None, None),
    };
    let nseg = t.segments.labels.len();
    let seg_arg = seg.as_ref().map(|(i, l)| (i.as_slice(), l.len()));
    let d = &cfit.design;
    let point = simulate::sums(
        &*cfit.family,
        d,
        beta,
        &prep,
        seg_arg,
        simulate::What::point(scenario.price),
        Some(cfit.baseline()),
    );
    let total = t
        .point
        .get_or_insert_with(|| Sums::zero(m, 0, scenario.price.is_some()));
    while total.segments < nseg {
        total.push_segment();
    }
    total.add(&point, factor, into.as_deref());
    let (stranded, stranded_weight) = prep.stranded(d);
    t.stranded += stranded;
    t.stranded_weight += stranded_weight * factor;
    t.situations += d.situations();
    t.weight += raw_total;
    add_classes(
        &mut t.classes,
        &super::class_rows(&cfit, beta, &prep),
        raw_total,
        m,
    );
    if let Some(all) = parameter_draws {
        let family = cfit
            .family
            .for_bands()
            .unwrap_or_else(|| cfit.family.clone());
        let part = Part {
            d,
            prep: &prep,
            seg: seg_arg,
            into: into.as_deref(),
            nseg,
            factor,
        };
        add_draws(&*family, all, &part, &mut t.draws);
    }
    Ok((cfit, prep))
}

/// The fit over one chunk: its design, and the family with its decision
/// makers numbered after the earlier chunks'; and the factor from the chunk's
/// weights (rescaled to average 1 within it) back to the file's units.
fn chunk_fit(
    spec: &Spec,
    fit: &Fit,
    template: &Fit,
    obs: crate::data::Observations,
    path: &Path,
    t: &mut Totals,
) -> Result<(Fit, f64)> {
    let units = if obs.group.is_some() {
        obs.groups
    } else {
        obs.situations
    };
    let family = fit
        .family
        .at_unit(t.units)
        .unwrap_or_else(|| fit.family.clone());
    t.units += units;
    // Weights are rescaled to average 1 within a chunk: back to the file's units.
    let factor = obs.weight_total / obs.weight.iter().sum::<f64>().max(1e-300);
    let design = Design::build(spec, Arc::new(obs));
    family
        .check_forecast_data(spec, &design)
        .map_err(|m| Error::data(path, format!("forecasting over this file: {m}")))?;
    let mut cfit = template.clone();
    cfit.design = design;
    cfit.family = family;
    Ok((cfit, factor))
}

/// One chunk as the bands see it: its design and prepared scenario, its
/// segments and their place among the population's, its weight factor.
struct Part<'a> {
    d: &'a Design,
    prep: &'a Prepared,
    seg: Option<(&'a [u32], usize)>,
    into: Option<&'a [usize]>,
    nseg: usize,
    factor: f64,
}

/// Adds one chunk's sums under every parameter draw.
fn add_draws(family: &dyn Family, all: &[Vec<f64>], part: &Part, draws: &mut Vec<DrawSums>) {
    let m = part.prep.alternatives();
    if draws.is_empty() {
        let zero = DrawSums {
            base: vec![0.0; m],
            scenario: vec![0.0; m],
            segments: Vec::new(),
        };
        *draws = vec![zero; all.len()];
    }
    let factor = part.factor;
    let scaled = |x: f64| if factor == 1.0 { x } else { x * factor };
    for (b, acc) in all.iter().zip(draws.iter_mut()) {
        let s = simulate::sums(
            family,
            part.d,
            b,
            part.prep,
            part.seg,
            simulate::What::SHARES,
            None,
        );
        for a in 0..m {
            acc.base[a] += scaled(s.acc[a]);
            acc.scenario[a] += scaled(s.acc[m + a]);
        }
        acc.segments.resize(part.nseg * m, 0.0);
        for (ls, &g) in part.into.iter().copied().flatten().enumerate() {
            let block = s.segment(ls);
            for a in 0..m {
                acc.segments[g * m + a] += scaled(block[m + a]);
            }
        }
    }
}

/// The population's index of segment `label`, added when new.
fn place(s: &mut Segments, label: &str, file: &std::path::Path, column: &str) -> Result<usize> {
    if let Some(&g) = s.index.get(label) {
        return Ok(g);
    }
    if s.labels.len() >= MAX_SEGMENTS {
        return Err(too_many_segments(file, column, "--by segment column"));
    }
    s.index.insert(label.to_string(), s.labels.len());
    s.labels.push(label.to_string());
    Ok(s.labels.len() - 1)
}

/// The forecast from the population's sums.
fn finish(
    scenario: &Scenario,
    opts: &Options,
    parameter_draws: Option<Option<Vec<Vec<f64>>>>,
    t: Totals,
    path: &Path,
) -> Result<Forecast> {
    let Some(total) = t.point else {
        return Err(Error::data(path, "the file has a header but no data rows"));
    };
    let m = t.names.len();
    // Segments in the order a whole-file pass gives them.
    let nseg = t.segments.labels.len();
    let mut order: Vec<usize> = (0..nseg).collect();
    order.sort_by(|&a, &b| label_order(&t.segments.labels[a], &t.segments.labels[b]));
    let mut rank = vec![0usize; nseg];
    for (r, &g) in order.iter().enumerate() {
        rank[g] = r;
    }
    let mut sorted = Sums::zero(m, nseg, total.price);
    sorted.add(&total, 1.0, Some(&rank));
    let point = sorted.pass(t.weight);
    let mut band_scen = vec![Vec::new(); m];
    let mut band_change = vec![Vec::new(); m];
    let mut band_seg = vec![Vec::new(); nseg * m];
    for acc in &t.draws {
        for a in 0..m {
            let (base, scen) = (acc.base[a] / t.weight, acc.scenario[a] / t.weight);
            band_scen[a].push(scen);
            band_change[a].push(scen - base);
        }
        for (r, &g) in order.iter().enumerate() {
            let wt = sorted.segment(r)[2 * m];
            for a in 0..m {
                band_seg[r * m + a].push(acc.segments.get(g * m + a).copied().unwrap_or(0.0) / wt);
            }
        }
    }
    let mut warnings = Vec::new();
    if let Some(None) = parameter_draws {
        warnings.push(NO_BANDS.into());
    }
    let market = match &opts.market {
        Some(Market::Total(v)) => Some(*v),
        Some(Market::Weights) => Some(t.weight),
        None => None,
    };
    let labels = opts.by.as_ref().map(|_| {
        order
            .iter()
            .map(|&g| t.segments.labels[g].clone())
            .collect()
    });
    let mut classes = t.classes;
    classes.iter_mut().for_each(|c| c.settle(t.weight));
    let mut f = assemble(
        scenario,
        opts,
        Figures {
            names: t.names,
            point,
            band_scen,
            band_change,
            band_seg,
            labels,
            situations: t.situations,
            stranded_situations: t.stranded,
            lost_share: t.stranded_weight / t.weight.max(1e-300),
            market,
            calibration: None,
            warnings,
        },
    );
    f.classes = classes;
    Ok(f)
}

/// Adds one chunk's class rows (weight `w` in the file's units) to the
/// population's running sums.
fn add_classes(
    sums: &mut Vec<super::ClassForecast>,
    rows: &[super::ClassForecast],
    w: f64,
    m: usize,
) {
    for (k, row) in rows.iter().enumerate() {
        if sums.len() <= k {
            sums.push(super::ClassForecast {
                class: row.class.clone(),
                size: 0.0,
                base: vec![0.0; m],
                scenario: vec![0.0; m],
            });
        }
        sums[k].add(row, w);
    }
}
