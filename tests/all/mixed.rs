//! Mixed logit against an independent numpy/scipy implementation on the same
//! draws (tests/reference/mixed_reference.py, fixture
//! tests/fixtures/mixed_reference.json, invented express-coach data): the
//! simulated log-likelihood and its gradient at a fixed point, conditional
//! means, and the estimates of a panel and a cross-section model. Also facts
//! of the model and the draws' definitions.

use std::sync::Arc;

use serde_json::Value;
use sharecast::data::Dataset;
use sharecast::design::Design;
use sharecast::estimate::{self, Step};
use sharecast::model::draws::{halton, mlhs, Sequence, Simulation};
use sharecast::model::mixed::Mixed;
use sharecast::model::{self, Family};
use sharecast::rng::Rng;
use sharecast::spec::Spec;

use crate::common::*;

pub(crate) fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/mixed_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

pub(crate) fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// The case's data as a wide CSV and a spec over it (group by person unless
/// `cross_section`), with `[parameters]` starts when given.
pub(crate) fn case_spec(case: &Value, start: Option<&[f64]>) -> (Spec, Dataset) {
    let name = case["name"].as_str().unwrap();
    let dir = scratch(&format!("mixed-{name}-{}", start.is_some()));
    let cols = case["columns"].as_object().unwrap();
    let names: Vec<&String> = cols.keys().collect();
    let person = case["person"].as_array().unwrap();
    let chosen = case["chosen"].as_array().unwrap();
    let mut csv = format!(
        "person,chosen,{}\n",
        names
            .iter()
            .map(|s| s.as_str())
            .collect::<Vec<_>>()
            .join(",")
    );
    for i in 0..person.len() {
        let row: Vec<String> = names
            .iter()
            .map(|c| format!("{}", cols[*c][i].as_f64().unwrap()))
            .collect();
        csv.push_str(&format!(
            "{},{},{}\n",
            person[i],
            chosen[i].as_str().unwrap(),
            row.join(",")
        ));
    }
    write(&dir, "data.csv", &csv);
    let random = case["random"].as_object().unwrap();
    let dist = |n: &str| {
        random
            .get(n)
            .map(|d| format!("random = \"{}\"\n", d.as_str().unwrap()))
            .unwrap_or_default()
    };
    let group = if name == "cross_section" {
        ""
    } else {
        "group = \"person\"\n"
    };
    let constants = random
        .get("asc_rail")
        .and_then(|v| v.as_str())
        .map(|d| format!("random_constants = {{ rail = \"{d}\" }}\n"))
        .unwrap_or_default();
    let keys = model_keys(case);
    let mut text = format!(
        "[data]\nfile = \"data.csv\"\nlayout = \"wide\"\nchoice = \"chosen\"\n{group}\
         [model]\nfamily = \"mixed\"\nbase = \"car\"\n{constants}{keys}\
         [alternatives.car]\n[alternatives.coach]\n[alternatives.rail]\n\
         [[attribute]]\nname = \"cost\"\ncolumns = {{ car = \"car_cost\", coach = \"coach_cost\", rail = \"rail_cost\" }}\n{}\
         [[attribute]]\nname = \"time\"\ncolumns = {{ car = \"car_time\", coach = \"coach_time\", rail = \"rail_time\" }}\n{}\
         [[attribute]]\nname = \"comfort\"\ncolumns = {{ coach = \"coach_comfort\", rail = \"rail_comfort\" }}\n{}\
         [simulation]\ndraws = {}\n",
        dist("cost"),
        dist("time"),
        dist("comfort"),
        case["draws"].as_u64().unwrap()
    );
    if let Some(start) = start {
        text.push_str("[parameters]\n");
        for (p, s) in case["parameters"].as_array().unwrap().iter().zip(start) {
            text.push_str(&format!("{} = {{ start = {s:?} }}\n", p.as_str().unwrap()));
        }
    }
    let spec_path = write(&dir, "spec.toml", &text);
    let spec = model::read_spec(&spec_path).unwrap();
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    (spec, ds)
}

/// The case's optional "model_keys" object as `[model]` lines: strings
/// quoted, arrays of strings as TOML arrays, booleans and numbers bare.
fn model_keys(case: &Value) -> String {
    let Some(keys) = case.get("model_keys").and_then(|k| k.as_object()) else {
        return String::new();
    };
    let quoted = |v: &Value| format!("\"{}\"", v.as_str().unwrap());
    keys.iter()
        .map(|(k, v)| {
            let value = match v {
                Value::Bool(b) => b.to_string(),
                Value::Number(x) => x.to_string(),
                Value::Array(items) => format!(
                    "[{}]",
                    items.iter().map(quoted).collect::<Vec<_>>().join(", ")
                ),
                _ => quoted(v),
            };
            format!("{k} = {value}\n")
        })
        .collect()
}

/// The case's uniforms `[n][r][d]` in our layout `[n][d][r]`.
fn uniforms(case: &Value) -> (Vec<f64>, usize) {
    let u = case["uniforms"].as_array().unwrap();
    let r = case["draws"].as_u64().unwrap() as usize;
    let dims = u[0][0].as_array().unwrap().len();
    let mut out = vec![0.0; u.len() * dims * r];
    for (n, person) in u.iter().enumerate() {
        for (k, draw) in person.as_array().unwrap().iter().enumerate() {
            for (d, x) in draw.as_array().unwrap().iter().enumerate() {
                out[(n * dims + d) * r + k] = x.as_f64().unwrap();
            }
        }
    }
    (out, r)
}

pub(crate) fn family_on(spec: &Spec, case: &Value) -> Arc<Mixed> {
    let (u, r) = uniforms(case);
    Arc::new(Mixed::new(spec).unwrap().with_uniforms(u, r))
}

pub(crate) fn case<'a>(r: &'a Value, name: &str) -> &'a Value {
    r["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == name)
        .unwrap()
}

#[test]
fn simulated_likelihood_and_gradient_match_the_reference_on_the_same_draws() {
    let r = fixture();
    for name in ["panel", "cross_section"] {
        let c = case(&r, name);
        let (spec, ds) = case_spec(c, None);
        let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
        let want: Vec<&str> = c["parameters"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap())
            .collect();
        assert_eq!(names, want, "{name}: parameter order");
        let family = family_on(&spec, c);
        let d = Design::build(&spec, Arc::new(ds.obs));
        let point = floats(&c["point"]);
        let e = family.evaluate(&d, &point, true, false);
        // Tolerance of the issue: log-likelihood and gradient to 1e-8.
        assert_close(
            &format!("{name} log-likelihood"),
            e.ll,
            c["ll_at_point"].as_f64().unwrap(),
            1e-8,
        );
        for (k, g) in floats(&c["grad_at_point"]).iter().enumerate() {
            assert!(
                (e.grad[k] - g).abs() <= 1e-8 * g.abs().max(1.0),
                "{name}: gradient {}: {} vs reference {g}",
                want[k],
                e.grad[k]
            );
        }
        // Conditional means of each random coefficient, per decision maker.
        let cond = family.conditional(&d, &point).unwrap();
        let want = c["conditional_means_at_point"].as_array().unwrap();
        assert_eq!(cond.first.len(), want.len());
        for (n, row) in want.iter().enumerate() {
            for (dim, x) in floats(row).iter().enumerate() {
                let got = cond.means[n * 3 + dim];
                assert!(
                    (got - x).abs() <= 1e-9 * x.abs().max(1.0),
                    "{name}: conditional mean {n},{dim}: {got} vs {x}"
                );
            }
        }
    }
}

#[test]
fn uniform_triangular_and_lognormal_transforms_match_the_reference() {
    // Triangular random constant, lognormal cost on minus-fare columns, uniform time.
    let r = fixture();
    let c = case(&r, "transforms");
    let (spec, ds) = case_spec(c, None);
    let family = family_on(&spec, c);
    let d = Design::build(&spec, Arc::new(ds.obs));
    let point = floats(&c["point"]);
    let e = family.evaluate(&d, &point, true, false);
    assert_close(
        "transforms log-likelihood",
        e.ll,
        c["ll_at_point"].as_f64().unwrap(),
        1e-8,
    );
    for (k, g) in floats(&c["grad_at_point"]).iter().enumerate() {
        assert!(
            (e.grad[k] - g).abs() <= 1e-8 * g.abs().max(1.0),
            "transforms: gradient {k}: {} vs reference {g}",
            e.grad[k]
        );
    }
}

#[test]
fn estimates_match_the_reference_on_the_same_draws() {
    // Both searches start from the reference's start (the fixed-coefficient
    // logit with spreads 0.5, 0.3, 0.5): with 60 draws the simulated
    // likelihood has several local maxima. Tolerances of the issue: estimates
    // 1e-5; log-likelihood 1e-8; standard errors from a differenced Hessian 1e-4.
    let r = fixture();
    for name in ["panel", "cross_section"] {
        let c = case(&r, name);
        let start = floats(&c["start"]);
        let (spec, ds) = case_spec(c, Some(&start));
        let family = family_on(&spec, c);
        let quiet = |_s: Step| {};
        let fit = estimate::fit_family(&spec, Arc::new(ds.obs), family, &quiet).unwrap();
        assert!(fit.stats.converged, "{name}: not converged");
        assert_close(
            &format!("{name} log-likelihood"),
            fit.stats.log_likelihood,
            c["ll_at_estimates"].as_f64().unwrap(),
            1e-8,
        );
        let (est, se) = (floats(&c["estimates"]), floats(&c["std_errors"]));
        let rse = floats(&c["robust_std_errors"]);
        for (k, row) in fit.parameters.iter().enumerate() {
            assert!(
                (row.estimate - est[k]).abs() <= 1e-5 * est[k].abs().max(1.0),
                "{name} {}: {} vs reference {}",
                row.name,
                row.estimate,
                est[k]
            );
            assert_close(
                &format!("{name} {} s.e.", row.name),
                row.std_error,
                se[k],
                1e-4,
            );
            if name == "panel" {
                // Sandwich errors clustered by decision maker.
                assert_close(
                    &format!("{name} {} robust s.e.", row.name),
                    row.robust_std_error,
                    rse[k],
                    1e-4,
                );
            }
        }
    }
}

#[test]
fn spreads_at_zero_give_the_logit_exactly() {
    // Fact of the model: with every spread 0 each draw's coefficients equal the
    // locations, so the simulated likelihood is the logit's (the reference
    // stores both at its point: equal to 1e-12).
    let r = fixture();
    let z = &r["zero_spread_check"];
    let c = case(&r, "panel");
    let (spec, ds) = case_spec(c, None);
    let family = family_on(&spec, c);
    let d = Design::build(&spec, Arc::new(ds.obs));
    let point = floats(&z["point"]);
    let mixed = family.evaluate(&d, &point, false, false).ll;
    // The logit family on the same design, with the cost coefficient -exp(m).
    let mut linear = point.clone();
    let cost = spec.parameter_index("cost").unwrap();
    linear[cost] = -point[cost].exp();
    let logit = family
        .simpler()
        .unwrap()
        .evaluate(&d, &linear, false, false)
        .ll;
    assert!(
        (mixed - logit).abs() < 1e-9,
        "mixed {mixed} vs logit {logit}"
    );
    assert_close(
        "logit at the point",
        logit,
        z["logit_ll"].as_f64().unwrap(),
        1e-12,
    );
}

#[test]
fn halton_draws_follow_their_definition() {
    // The radical inverse (Halton 1960): base 2 gives 1/2, 1/4, 3/4, 1/8, 5/8, ...
    // base 3 gives 1/3, 2/3, 1/9, 4/9, 7/9, ...; base 5 gives 1/5, 2/5, 3/5, 4/5, 1/25.
    let b2 = [0.5, 0.25, 0.75, 0.125, 0.625, 0.375, 0.875];
    let b3 = [
        1.0 / 3.0,
        2.0 / 3.0,
        1.0 / 9.0,
        4.0 / 9.0,
        7.0 / 9.0,
        2.0 / 9.0,
    ];
    let b5 = [0.2, 0.4, 0.6, 0.8, 0.04, 0.24];
    for (base, want) in [(2u64, &b2[..]), (3, &b3[..]), (5, &b5[..])] {
        for (i, w) in want.iter().enumerate() {
            let h = halton(base, i as u64 + 1);
            assert!((h - w).abs() < 1e-15, "base {base} element {}: {h}", i + 1);
        }
    }
    // Our draws shift each dimension by one uniform from the seed: differences
    // between consecutive draws of one decision maker keep the sequence's.
    let sim = Simulation {
        draws: 7,
        sequence: Sequence::Halton,
        seed: 3,
    };
    let u = sim.uniforms(2, 1);
    for k in 1..7 {
        let step = (u[k] - u[0]).rem_euclid(1.0);
        let want = (b2[k] - b2[0]).rem_euclid(1.0);
        assert!((step - want).abs() < 1e-12, "shifted draw {k}");
    }
    // The second decision maker continues the sequence (elements 8..14).
    let h8 = halton(2, 8);
    let shift = (u[0] - b2[0]).rem_euclid(1.0);
    assert!(((h8 + shift).fract() - u[7]).abs() < 1e-12);
    // Another seed moves the draws.
    let other = Simulation { seed: 4, ..sim }.uniforms(2, 1);
    assert!(other.iter().zip(&u).any(|(a, b)| (a - b).abs() > 1e-6));
}

#[test]
fn mlhs_draws_put_one_point_in_each_stratum() {
    // Modified Latin hypercube sampling (Hess, Train and Polak 2006): R points
    // (k + xi)/R with one shift xi, shuffled: exactly one in each [k/R, (k+1)/R).
    let mut rng = Rng::new(9);
    for r in [1usize, 5, 64, 1000] {
        let mut row = vec![0.0; r];
        mlhs(&mut rng, &mut row);
        let mut seen = vec![0; r];
        for x in &row {
            assert!(*x > 0.0 && *x < 1.0);
            seen[((x * r as f64) as usize).min(r - 1)] += 1;
        }
        assert!(seen.iter().all(|c| *c == 1), "R = {r}: {seen:?}");
        // The gaps are all 1/R: one shift for every point.
        let mut sorted = row.clone();
        sorted.sort_by(f64::total_cmp);
        for w in sorted.windows(2) {
            assert!((w[1] - w[0] - 1.0 / r as f64).abs() < 1e-12);
        }
    }
    // And a sequence's draws are shuffled, not in order (R = 1000).
    let sim = Simulation {
        draws: 1000,
        sequence: Sequence::Mlhs,
        seed: 1,
    };
    let u = sim.uniforms(1, 2);
    assert!(u[..1000].windows(2).any(|w| w[1] < w[0]));
}

#[test]
fn the_normal_quantile_inverts_the_distribution_function() {
    // Phi(Phi^-1(u)) = u (definition), checked down to the far tails, and
    // known quantiles (from the standard normal table, common practice).
    for u in [1e-12, 1e-6, 0.01, 0.025, 0.3, 0.5, 0.77, 0.975, 1.0 - 1e-9] {
        let z = model::normal::quantile(u);
        let back = model::normal::cdf(z);
        assert!((back - u).abs() <= 1e-13 * u.max(1e-3), "u {u}: {back}");
    }
    assert!((model::normal::quantile(0.975) - 1.959_963_984_540_054).abs() < 1e-13);
    assert_eq!(model::normal::quantile(0.5), 0.0);
}
