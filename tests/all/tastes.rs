//! Mixed logit with correlated tastes (`[model].correlated`) and in
//! willingness-to-pay space (`space = "willingness"`, `price`) against an
//! independent numpy/scipy implementation on the same draws
//! (tests/reference/tastes_reference.py, fixture
//! tests/fixtures/tastes_reference.json, invented express-coach data): the
//! simulated log-likelihood and its gradient at a fixed point, conditional
//! means, estimates, standard errors and the implied correlations, and two
//! facts of the model the reference also checks.

use std::cmp::Ordering;
use std::sync::Arc;

use serde_json::Value;
use sharecast::design::Design;
use sharecast::estimate::{self, Step};
use sharecast::model::Family;

use crate::common::*;
use crate::mixed::{case, case_spec, family_on, floats};

fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/tastes_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn strings(v: &Value) -> Vec<&str> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap())
        .collect()
}

/// A copy of a case under another name (its own scratch folder), without its
/// `[model]` keys when `keys` is false: the same data as an independent,
/// preference-space mixed logit.
fn renamed(c: &Value, name: &str, keys: bool) -> Value {
    let mut c = c.clone();
    c["name"] = Value::from(name);
    if !keys {
        c.as_object_mut().unwrap().remove("model_keys");
    }
    c
}

/// The log-likelihood and gradient of a case's spec at `point`, on the
/// case's uniforms.
fn evaluate(c: &Value, point: &[f64]) -> (f64, Vec<f64>) {
    let (spec, ds) = case_spec(c, None);
    let family = family_on(&spec, c);
    let d = Design::build(&spec, Arc::new(ds.obs));
    let e = family.evaluate(&d, point, true, false);
    (e.ll, e.grad)
}

#[test]
fn correlated_and_willingness_likelihood_gradient_and_means_match_the_reference() {
    let r = fixture();
    for name in ["correlated", "willingness", "willingness_fixed_scale"] {
        let c = case(&r, name);
        let (spec, ds) = case_spec(c, None);
        let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
        let want = strings(&c["parameters"]);
        // The parameter order fixed for both implementations: locations, one
        // spread per random coefficient in parameter order, then the Cholesky
        // off-diagonals row by row of the `correlated` list.
        assert_eq!(names, want, "{name}: parameter order");
        let family = family_on(&spec, c);
        let d = Design::build(&spec, Arc::new(ds.obs));
        let point = floats(&c["point"]);
        let e = family.evaluate(&d, &point, true, false);
        // tests/reference/tastes_reference.py, independent numpy/scipy
        // implementation: simulated log-likelihood and analytic gradient on
        // the same uniforms, to 1e-8 (its gradient agrees with five-point
        // differences to "grad_fd_max_rel_diff", below 1e-6).
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
        // tests/reference/tastes_reference.py, independent numpy/scipy
        // implementation: conditional mean of each random coefficient (the
        // price scale and the willingnesses to pay themselves in willingness
        // space), per decision maker, to 1e-6.
        let cond = family.conditional(&d, &point).unwrap();
        let want = c["conditional_means_at_point"].as_array().unwrap();
        assert_eq!(cond.first.len(), want.len(), "{name}: decision makers");
        for (n, row) in want.iter().enumerate() {
            let row = floats(row);
            for (dim, x) in row.iter().enumerate() {
                let got = cond.means[n * row.len() + dim];
                assert!(
                    (got - x).abs() <= 1e-6 * x.abs().max(1.0),
                    "{name}: conditional mean {n},{dim}: {got} vs {x}"
                );
            }
        }
    }
}

/// The correlation matrix (list order) implied by the Cholesky factor in
/// `est`: `L[i][i]` is `<list_i>_spread`, `L[i][j]` is `chol_<list_i>_<list_j>`.
fn implied_correlations(params: &[&str], list: &[&str], est: &[f64]) -> Vec<Vec<f64>> {
    let at = |n: String| est[params.iter().position(|p| *p == n).unwrap()];
    let m = list.len();
    let l: Vec<Vec<f64>> = (0..m)
        .map(|i| {
            (0..m)
                .map(|j| match j.cmp(&i) {
                    Ordering::Less => at(format!("chol_{}_{}", list[i], list[j])),
                    Ordering::Equal => at(format!("{}_spread", list[i])),
                    Ordering::Greater => 0.0,
                })
                .collect()
        })
        .collect();
    let cov = |i: usize, j: usize| (0..m).map(|k| l[i][k] * l[j][k]).sum::<f64>();
    (0..m)
        .map(|i| {
            (0..m)
                .map(|j| cov(i, j) / (cov(i, i) * cov(j, j)).sqrt())
                .collect()
        })
        .collect()
}

#[test]
fn correlated_and_willingness_estimates_match_the_reference() {
    // Both searches start from the reference's start (a fixed-coefficient
    // logit's locations, spreads 0.5 and 0.3 for the cost, off-diagonals
    // 0.01): with 50 draws the simulated likelihood can have other local
    // maxima.
    let r = fixture();
    for name in ["correlated", "willingness"] {
        let c = case(&r, name);
        let start = floats(&c["start"]);
        let (spec, ds) = case_spec(c, Some(&start));
        let family = family_on(&spec, c);
        let quiet = |_s: Step| {};
        let fit = estimate::fit_family(&spec, Arc::new(ds.obs), family, &quiet).unwrap();
        assert!(fit.stats.converged, "{name}: not converged");
        // tests/reference/tastes_reference.py, independent numpy/scipy
        // implementation (BFGS, then Newton to max |gradient| < 1e-8):
        // log-likelihood 1e-8, estimates 1e-5, classical standard errors
        // from a differenced Hessian 1e-4.
        assert_close(
            &format!("{name} log-likelihood"),
            fit.stats.log_likelihood,
            c["ll_at_estimates"].as_f64().unwrap(),
            1e-8,
        );
        let (est, se) = (floats(&c["estimates"]), floats(&c["std_errors"]));
        assert_eq!(fit.parameters.len(), est.len(), "{name}: parameters");
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
        }
        // tests/reference/tastes_reference.py, independent numpy/scipy
        // implementation: the correlations of the listed tastes at its
        // estimates; the same Cholesky convention applied to our estimates
        // gives them to 1e-5.
        let params = strings(&c["parameters"]);
        let list = strings(&c["correlated"]);
        let ours: Vec<f64> = fit.parameters.iter().map(|p| p.estimate).collect();
        let got = implied_correlations(&params, &list, &ours);
        for (i, row) in c["correlations_at_estimates"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            for (j, want) in floats(row).iter().enumerate() {
                assert!(
                    (got[i][j] - want).abs() <= 1e-5,
                    "{name}: correlation of {} and {}: {} vs reference {want}",
                    list[i],
                    list[j],
                    got[i][j]
                );
            }
        }
        // The same figures as sharecast's analysis reports them, with their
        // delta-method errors under the classical covariance (the
        // reference's): values 1e-5, errors 1e-3 relative (both sides
        // difference numerically).
        let mut classical = fit.clone();
        classical.robust_covariance = classical.covariance.clone();
        let reported = sharecast::analysis::correlation::correlations(&classical).unwrap();
        assert_eq!(reported.coefficients, list, "{name}: Cholesky order");
        // Each listed coefficient's row says it is correlated and gives its
        // normal's standard deviation, the diagonal's square root of L L'.
        let rows = sharecast::analysis::random::rows(&classical);
        for (k, coefficient) in list.iter().enumerate() {
            let row = rows.iter().find(|r| &r.coefficient == coefficient).unwrap();
            assert!(row.correlated, "{name}: {coefficient}");
            assert_close(
                &format!("{name}: {coefficient} s.d."),
                row.underlying_std_dev,
                reported.std_devs[k].value,
                1e-12,
            );
        }
        let ses = c["correlation_std_errors"].as_array().unwrap();
        for (i, row) in c["correlations_at_estimates"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            for (j, want) in floats(row).iter().enumerate() {
                let f = reported.correlations[i][j];
                assert!(
                    (f.value - want).abs() <= 1e-5,
                    "{name}: reported correlation {i},{j}"
                );
                if i != j {
                    let se = floats(&ses[i])[j];
                    assert!(
                        (f.std_error - se).abs() <= 1e-3 * se.abs().max(1e-3),
                        "{name}: correlation {i},{j} s.e. {} vs reference {se}",
                        f.std_error
                    );
                }
            }
        }
    }
}

#[test]
fn off_diagonals_at_zero_give_the_independent_model() {
    // Fact of the model: with every chol_* at 0 each listed taste is its
    // location plus its spread times its own draw, the independent mixed
    // logit. tests/reference/tastes_reference.py, independent numpy/scipy
    // implementation, stores both (its independent model is separate
    // loop-by-loop code; they agree to 1e-12).
    let r = fixture();
    let f = &r["fact_checks"]["zero_correlation"];
    let c = case(&r, "correlated");
    let (ll, _) = evaluate(&renamed(c, "correlated_zero", true), &floats(&f["point"]));
    let (ind, _) = evaluate(
        &renamed(c, "correlated_independent", false),
        &floats(&f["independent_point"]),
    );
    assert_close("correlated at zero", ll, f["sll"].as_f64().unwrap(), 1e-8);
    assert_close(
        "independent",
        ind,
        f["independent_sll"].as_f64().unwrap(),
        1e-8,
    );
    assert_close("correlated at zero vs independent", ll, ind, 1e-10);
}

#[test]
fn a_fixed_price_scale_gives_the_preference_space_model() {
    // Fact of the model (Train and Weeks 2005): with alpha fixed, willingness
    // space is preference space with b_cost = -alpha, b_k = alpha * w_k, and a
    // normal w_time of location m and spread s a normal coefficient of
    // location alpha * m and spread alpha * s.
    // tests/reference/tastes_reference.py, independent numpy/scipy
    // implementation, stores both figures (they agree to 1e-12 there).
    let r = fixture();
    let f = &r["fact_checks"]["fixed_scale_is_preference_space"];
    let c = case(&r, "willingness_fixed_scale");
    let (wtp, _) = evaluate(&renamed(c, "fixed_scale_wtp", true), &floats(&f["point"]));
    let (pref, _) = evaluate(
        &renamed(c, "fixed_scale_preference", false),
        &floats(&f["preference_point"]),
    );
    assert_close("willingness space", wtp, f["sll"].as_f64().unwrap(), 1e-8);
    assert_close(
        "preference space",
        pref,
        f["preference_sll"].as_f64().unwrap(),
        1e-8,
    );
    assert_close("willingness vs preference space", wtp, pref, 1e-10);
}
