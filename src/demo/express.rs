//! The express survey demo: a stated-choice survey by the invented Tamsey Vale
//! regional transport authority. 600 respondents each answer 8 choice tasks
//! between their car, a proposed express coach and the regional rail line;
//! tastes differ between respondents (a lognormal fare sensitivity, a normal
//! time sensitivity and a normal preference for rail), drawn once per
//! respondent and kept through their tasks. Time and fare sensitivity go
//! together: those who mind time more also mind paying more (the time
//! coefficient and the log of minus the cost coefficient are jointly normal
//! with correlation `time_cost_correlation`); the rail preference is
//! independent of both.

use std::path::Path;

use super::{pick, round, truth};
use crate::data::write::{table, Values};
use crate::error::Result;
use crate::rng::Rng;

/// True parameters: constants and headway fixed; cost negative-lognormal
/// (location and standard deviation of the log of minus the coefficient),
/// time and the rail constant normal (mean and standard deviation); the
/// correlation of the time coefficient with the log of minus the cost
/// coefficient (negative: a more negative time coefficient goes with a
/// larger fare sensitivity).
pub const EXPRESS_TRUTH: &[(&str, f64)] = &[
    ("asc_coach", -0.4),
    ("asc_rail", 0.3),
    ("cost", -1.5),
    ("time", -0.05),
    ("headway", -0.02),
    ("asc_rail_spread", 0.9),
    ("cost_spread", 0.7),
    ("time_spread", 0.03),
    ("time_cost_correlation", -0.5),
];

/// One respondent's cost and time coefficients and rail constant: the time
/// coefficient's standard normal is mixed into the log fare sensitivity's
/// with weight rho, so that the two correlate rho.
fn tastes(rng: &mut Rng) -> (f64, f64, f64) {
    let t = |n: &str| truth(EXPRESS_TRUTH, n);
    let (z_cost, z_time) = (rng.normal(), rng.normal());
    let rho = t("time_cost_correlation");
    let z_cost = rho * z_time + (1.0 - rho * rho).sqrt() * z_cost;
    let b_cost = -(t("cost") + t("cost_spread") * z_cost).exp();
    let b_time = t("time") + t("time_spread") * z_time;
    let c_rail = t("asc_rail") + t("asc_rail_spread") * rng.normal();
    (b_cost, b_time, c_rail)
}

/// Levels a task draws each attribute from.
fn level(rng: &mut Rng, levels: &[f64]) -> f64 {
    levels[rng.below(levels.len())]
}

/// Writes the survey (wide layout, one row per task) to `path`.
pub fn express(path: &Path, force: bool) -> Result<()> {
    let t = |n: &str| truth(EXPRESS_TRUTH, n);
    let mut rng = Rng::new(20_261_203);
    let names = [
        "respondent",
        "task",
        "choice",
        "car_time",
        "car_cost",
        "coach_time",
        "coach_fare",
        "coach_headway",
        "rail_time",
        "rail_fare",
        "rail_headway",
        "car_owner",
    ];
    let mut ints: Vec<Vec<i64>> = vec![Vec::new(); 2];
    let mut choice = Vec::new();
    let mut nums: Vec<Vec<f64>> = vec![Vec::new(); 8];
    let mut owner = Vec::new();
    for person in 1..=600 {
        // This respondent's own tastes, the same in all of their tasks.
        let (b_cost, b_time, c_rail) = tastes(&mut rng);
        let has_car = rng.uniform() < 0.8;
        let base_time = 30.0 + 50.0 * rng.uniform();
        for task in 1..=8 {
            let car_time = round(base_time * level(&mut rng, &[0.9, 1.0, 1.2, 1.4]), 0);
            let car_cost = level(&mut rng, &[4.0, 6.0, 8.0, 11.0]);
            let coach_time = round(base_time * level(&mut rng, &[1.0, 1.15, 1.3, 1.5]), 0);
            let coach_fare = level(&mut rng, &[2.5, 3.5, 5.0, 7.0]);
            let coach_headway = level(&mut rng, &[15.0, 30.0, 60.0]);
            let rail_time = round(base_time * level(&mut rng, &[0.7, 0.85, 1.0, 1.1]), 0);
            let rail_fare = level(&mut rng, &[4.0, 6.0, 8.5, 12.0]);
            let rail_headway = level(&mut rng, &[10.0, 20.0, 30.0, 60.0]);
            let v = [
                b_cost * car_cost + b_time * car_time,
                t("asc_coach")
                    + b_cost * coach_fare
                    + b_time * coach_time
                    + t("headway") * coach_headway,
                c_rail + b_cost * rail_fare + b_time * rail_time + t("headway") * rail_headway,
            ];
            let avail = [has_car, true, true];
            let pick = pick(&mut rng, &v, &avail);
            ints[0].push(person);
            ints[1].push(task);
            choice.push(["car", "coach", "rail"][pick].to_string());
            for (col, x) in nums.iter_mut().zip([
                car_time,
                car_cost,
                coach_time,
                coach_fare,
                coach_headway,
                rail_time,
                rail_fare,
                rail_headway,
            ]) {
                col.push(x);
            }
            owner.push(has_car as i64);
        }
    }
    let mut out = vec![
        (names[0].to_string(), Values::Int(ints[0].clone())),
        (names[1].to_string(), Values::Int(ints[1].clone())),
        (names[2].to_string(), Values::Text(choice)),
    ];
    for (name, col) in names[3..11].iter().zip(nums) {
        out.push((name.to_string(), Values::Num(col)));
    }
    out.push((names[11].to_string(), Values::Int(owner)));
    table(path, force, &out)
}
