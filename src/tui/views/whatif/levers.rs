//! The what-if's state: one lever per (alternative, attribute) and per
//! characteristic, each holding at most one change; withdrawn alternatives;
//! the point forecast (computed at once, no draws) and the band forecast
//! (with draws, from the worker, kept only if its generation is current);
//! for a model with latent classes, each class's shares from the same job.

use std::any::Any;

use crate::analysis::classes::ByClass;
use crate::scenario::{self, Change, Forecast, Op, Scenario, Target};
use crate::spec::Spec;
use crate::tui::worker::{Job, Model, SEED};

/// Small and large steps of a multiplier, and of an added or set value.
pub const STEP_FACTOR: [f64; 2] = [0.01, 0.10];
pub const STEP_VALUE: [f64; 2] = [0.1, 1.0];

#[derive(Clone, Debug, PartialEq)]
pub struct Lever {
    pub target: Target,
    /// The alternative (None for a characteristic of the decision maker).
    pub alternative: Option<usize>,
    /// The attribute or characteristic name.
    pub variable: String,
}

#[derive(Clone, Debug)]
pub struct WhatIf {
    pub levers: Vec<Lever>,
    pub ops: Vec<Option<Op>>,
    pub removed: Vec<usize>,
    pub cursor: usize,
    pub point: Option<Forecast>,
    pub band: Option<Forecast>,
    /// The generation of the band requested for the current point.
    pub generation: u64,
    pub error: Option<String>,
    pub band_error: Option<String>,
    /// The point shown is a quick one (fewer simulation draws); the full
    /// forecast replaces it when the worker's band arrives.
    pub quick: bool,
    /// Each latent class's shares at the base and after the what-if (from
    /// the worker, with the band; none without classes or while computed).
    pub classes: Option<ByClass>,
    /// The panel of shares by class is shown.
    pub by_class: bool,
}

/// What the worker returns for a what-if: its forecast with the band and,
/// for a model with latent classes, each class's shares.
#[derive(Debug)]
pub struct Banded {
    pub forecast: Forecast,
    pub classes: Option<ByClass>,
}

/// Situations above which a family that simulates gives a quick point
/// forecast at each key press while the full one is computed on the worker.
pub const QUICK_ABOVE: usize = 20_000;

/// Rounds to six decimals so that repeated steps land on round numbers.
fn tidy(x: f64) -> f64 {
    (x * 1e6).round() / 1e6
}

/// One step up or down from a lever's change; `None` when it lands on no change.
pub fn stepped(op: Option<Op>, up: bool, big: bool) -> Option<Op> {
    let sign = if up { 1.0 } else { -1.0 };
    let b = usize::from(big);
    match op.unwrap_or(Op::Multiply(1.0)) {
        Op::Multiply(m) => {
            let m = tidy((m + sign * STEP_FACTOR[b]).max(0.0));
            (m != 1.0).then_some(Op::Multiply(m))
        }
        Op::Add(a) => {
            let a = tidy(a + sign * STEP_VALUE[b]);
            (a != 0.0).then_some(Op::Add(a))
        }
        Op::Set(s) => Some(Op::Set(tidy(s + sign * STEP_VALUE[b]))),
    }
}

/// Reads a typed change: `+10%` `-5%` (multiply), `x1.2` `*1.2` (multiply),
/// `+2` `-2` (add), `=3.5` or `3.5` (set).
pub fn parse_change(text: &str) -> Result<Op, String> {
    let t = text.trim();
    let bad = || {
        format!(
            "`{t}` is not a change: type +10% or -5%, x1.2 (multiply), +2 or -2 (add), =3.5 (set)"
        )
    };
    let num = |s: &str| {
        s.trim()
            .parse::<f64>()
            .ok()
            .filter(|v| crate::data::table::usable(*v))
            .ok_or_else(bad)
    };
    if let Some(p) = t.strip_suffix('%') {
        let p = num(p)?;
        return Ok(Op::Multiply(tidy(1.0 + p / 100.0)));
    }
    if let Some(m) = t
        .strip_prefix(['x', 'X', '*'])
        .or_else(|| t.strip_prefix('×'))
    {
        return Ok(Op::Multiply(num(m)?));
    }
    if let Some(v) = t.strip_prefix('=') {
        return Ok(Op::Set(num(v)?));
    }
    if t.starts_with(['+', '-']) {
        return Ok(Op::Add(num(t)?));
    }
    if t.is_empty() {
        return Err(bad());
    }
    Ok(Op::Set(num(t)?))
}

/// A change as a person would write it: `×1.10 (+10%)`, `+2`, `= 3.5`.
pub fn describe(op: &Op) -> String {
    match *op {
        Op::Multiply(m) => format!("×{m:.2} ({:+.0}%)", (m - 1.0) * 100.0),
        Op::Add(a) => format!("{a:+}"),
        Op::Set(s) => format!("= {s}"),
    }
}

impl WhatIf {
    pub fn new(spec: &Spec) -> WhatIf {
        let mut levers = Vec::new();
        for k in 0..spec.alternatives.len() {
            for (a, attr) in spec.attributes.iter().enumerate() {
                if attr.sources.get(k).is_some_and(|s| s.is_some()) {
                    levers.push(Lever {
                        target: Target::Attribute {
                            attribute: a,
                            alternative: k,
                        },
                        alternative: Some(k),
                        variable: attr.name.clone(),
                    });
                }
            }
        }
        for (c, ch) in spec.characteristics.iter().enumerate() {
            levers.push(Lever {
                target: Target::Characteristic { characteristic: c },
                alternative: None,
                variable: ch.name.clone(),
            });
        }
        WhatIf {
            ops: vec![None; levers.len()],
            levers,
            removed: Vec::new(),
            cursor: 0,
            point: None,
            band: None,
            generation: 0,
            error: None,
            band_error: None,
            quick: false,
            classes: None,
            by_class: false,
        }
    }

    /// A short name for the scenario file: the changes in words.
    pub fn name(&self, spec: &Spec) -> String {
        let mut parts: Vec<String> = self
            .levers
            .iter()
            .zip(&self.ops)
            .filter_map(|(l, op)| {
                let op = op.as_ref()?;
                let of = match l.alternative {
                    Some(k) => format!("{} of {}", l.variable, spec.alternatives[k].name),
                    None => l.variable.clone(),
                };
                Some(format!("{of} {}", describe(op)))
            })
            .collect();
        parts.extend(
            self.removed
                .iter()
                .map(|&k| format!("{} withdrawn", spec.alternatives[k].name)),
        );
        if parts.is_empty() {
            "workbench what-if: no change".into()
        } else {
            format!("workbench what-if: {}", parts.join(", "))
        }
    }

    /// The what-if as a scenario (the changes in lever order, then the withdrawals).
    pub fn scenario(&self, spec: &Spec) -> Scenario {
        Scenario {
            name: self.name(spec),
            changes: self
                .levers
                .iter()
                .zip(&self.ops)
                .filter_map(|(l, op)| {
                    op.map(|op| Change {
                        target: l.target.clone(),
                        op,
                        filter: None,
                    })
                })
                .collect(),
            remove: self.removed.clone(),
            ..Scenario::default()
        }
    }

    /// Recomputes the point forecast now and asks the worker for the band.
    pub fn refresh(&mut self, index: usize, model: &Model, generation: u64) -> Option<Job> {
        let sc = self.scenario(&model.spec);
        let fit = &model.fit;
        let quick = fit.family.abilities().simulation_draws
            && fit.design.situations() > QUICK_ABOVE
            && fit.family.for_bands().is_some();
        let opts = scenario::Options {
            draws: 0,
            seed: SEED,
            by: None,
            market: None,
            quick,
        };
        self.quick = quick;
        self.generation = generation;
        self.band = None;
        self.band_error = None;
        self.classes = None;
        match scenario::forecast(&model.spec, &model.fit, &model.ds, &sc, &opts) {
            Ok(f) => {
                self.point = Some(f);
                self.error = None;
                Some(band_job(index, generation, model.clone(), sc))
            }
            Err(e) => {
                self.point = None;
                self.error = Some(e.to_string());
                None
            }
        }
    }

    /// A band result from the worker: kept only when it belongs to the current what-if.
    pub fn banded(&mut self, generation: u64, result: Result<Box<Banded>, String>) {
        if generation != self.generation {
            return;
        }
        match result {
            Ok(b) => {
                let Banded {
                    forecast: f,
                    classes,
                } = *b;
                self.classes = classes;
                if self.quick {
                    // The worker's forecast has the full point figures too.
                    self.point = Some(f.clone());
                    self.quick = false;
                }
                self.band = Some(f)
            }
            Err(e) => self.band_error = Some(e),
        }
    }

    /// The forecast to show and export: with its band once the draws are in.
    pub fn best(&self) -> Option<&Forecast> {
        self.band.as_ref().or(self.point.as_ref())
    }

    /// The name of each lever's alternative, "(everyone)" for a
    /// characteristic: what the view's filter reads.
    pub fn lever_names<'a>(&self, spec: &'a Spec) -> Vec<&'a str> {
        self.levers
            .iter()
            .map(
                |l| match l.alternative.and_then(|k| spec.alternatives.get(k)) {
                    Some(a) => a.name.as_str(),
                    None => "(everyone)",
                },
            )
            .collect()
    }

    pub fn lever(&self) -> Option<&Lever> {
        self.levers.get(self.cursor)
    }

    pub fn changed(&self) -> usize {
        self.ops.iter().flatten().count()
    }
}

/// The what-if forecast with parameter draws, for the band, on the worker;
/// for a model with latent classes, each class's shares first.
fn band_job(index: usize, generation: u64, model: Model, sc: Scenario) -> Job {
    let opts = scenario::Options {
        draws: crate::tui::worker::DRAWS,
        seed: SEED,
        by: None,
        market: None,
        quick: false,
    };
    Job::Part {
        view: super::TITLE,
        index,
        generation,
        work: Box::new(move |_| {
            let classes = if crate::report::walk::class_count(&model.spec) > 1 {
                let prep =
                    scenario::prepare::prepare(&model.spec, &model.fit, &model.ds.table, &sc)?;
                crate::analysis::classes::by_class(&model.fit, Some(&prep))
            } else {
                None
            };
            let forecast = scenario::forecast(&model.spec, &model.fit, &model.ds, &sc, &opts)?;
            Ok(Box::new(Banded { forecast, classes }) as Box<dyn Any + Send>)
        }),
    }
}
