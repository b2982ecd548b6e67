//! The workbench on the garden demo's latent classes: the estimates view
//! sets the classes side by side under their shares (the analysis's
//! `classes`), each cell a parameter's estimate ± the error its inference
//! uses (`e` the Hessian's), the membership model and the class shares by
//! garden size; `c` turns back to one row per parameter. The what-if's `b`
//! shows each class's shares, which equal `analysis::classes::by_class` at
//! the base and after a step of a lever. A model without classes says so.

use ratatui::crossterm::event::KeyCode;
use sharecast::analysis::classes::by_class;
use sharecast::report::plus_minus;
use sharecast::scenario::prepare::prepare;
use sharecast::tui::estimates::Estimates;
use sharecast::tui::widgets::fixed;

use super::{demo, drain, has, keys, model, press, screen, whatif};

const GARDEN: &str = "specs/garden_classes.toml";

/// The screen line that starts (after the border and the cursor mark) with `label`.
fn line<'a>(s: &'a str, label: &str) -> &'a str {
    s.lines()
        .find(|l| {
            l.trim_start_matches('│')
                .trim_start_matches([' ', '›'])
                .starts_with(&format!("{label} "))
        })
        .unwrap_or_else(|| panic!("no line `{label}` in:\n{s}"))
}

#[test]
fn the_estimates_view_sets_the_classes_side_by_side() {
    let mut app = demo(&[GARDEN]);
    keys(&mut app, "2");
    let s = screen(&app, 140, 60);
    let analysis = app.models[0].analysis.ready().unwrap();
    let classes = analysis.classes.as_ref().unwrap();
    let m = model(GARDEN);
    let fit = &m.fit;
    has(
        &s,
        &["classes side by side", "a panel:", "10 of 10 random starts"],
    );
    let shares = line(&s, "share of decision makers");
    for r in &classes.rows {
        has(shares, &[&plus_minus(r.share, r.share_std_error)]);
    }
    // Each row holds its class copies' estimates ± clustered errors.
    let figure = |name: &str| {
        let p = fit.parameters.iter().find(|p| p.name == name).unwrap();
        plus_minus(p.estimate, p.robust_std_error)
    };
    for name in ["asc_plugs", "asc_potted", "price", "weeks", "peat_free"] {
        let row = line(&s, name);
        let one = row.find(&figure(&format!("{name}_class1"))).unwrap();
        let two = row.find(&figure(&format!("{name}_class2"))).unwrap();
        assert!(one < two, "class 1 left of class 2: {row}");
    }
    has(line(&s, "constant"), &[&figure("member_class2")]);
    has(
        line(&s, "garden_size"),
        &[&figure("member_class2_garden_size")],
    );
    // What each class chooses and the shares by garden size.
    let packet = line(&s, "packet");
    for r in &classes.rows {
        has(packet, &[&fixed(r.predicted[0], 4)]);
    }
    let (column, bands) = &classes.by_column[0];
    assert_eq!(column, "garden_size");
    for b in bands {
        let row = line(&s, &b.label);
        has(row, &[&format!("({})", b.decision_makers)]);
        for (p, q) in b.prior.iter().zip(&b.posterior) {
            has(row, &[&format!("{} / {}", fixed(*p, 3), fixed(*q, 3))]);
        }
    }
    // `e`: the Hessian's errors in every cell.
    keys(&mut app, "e");
    let s = screen(&app, 140, 60);
    has(&s, &["value ± s.e. from the Hessian"]);
    let p = fit
        .parameters
        .iter()
        .find(|p| p.name == "price_class2")
        .unwrap();
    assert_ne!(p.std_error, p.robust_std_error);
    has(line(&s, "price"), &[&plus_minus(p.estimate, p.std_error)]);
    keys(&mut app, "e");
    // The cursor walks the rows of the side-by-side table.
    keys(&mut app, "G");
    assert!(line(&screen(&app, 140, 60), "garden_size").contains('›'));

    // `c`: one row per parameter, and back.
    keys(&mut app, "c");
    let view = app.part::<Estimates>().unwrap();
    assert!(view.state.per_parameter);
    let s = screen(&app, 140, 60);
    has(&s, &["price_class2", "member_class2 "]);
    assert!(!s.contains("share of decision makers"), "{s}");
    keys(&mut app, "c");
    has(&screen(&app, 140, 60), &["share of decision makers"]);
}

#[test]
fn the_what_if_shows_each_class_s_shares_from_its_job() {
    let mut app = demo(&[GARDEN]);
    keys(&mut app, "5");
    assert!(!whatif(&app).by_class);
    keys(&mut app, "b");
    assert!(whatif(&app).by_class);
    let m = model(GARDEN);
    let base = by_class(&m.fit, None).unwrap();
    let w = whatif(&app);
    assert!(w.band.is_some(), "{:?} {:?}", w.band_error, w.error);
    let shown = w.classes.clone().unwrap();
    assert_eq!(shown.base, base.base);
    let s = screen(&app, 140, 50);
    has(&s, &["shares by latent class"]);
    let packet = |s: &str| {
        s.lines()
            .rfind(|l| l.starts_with("│ packet "))
            .unwrap()
            .to_string()
    };
    for b in &base.base {
        has(
            &packet(&s),
            &[&format!("{} → {}", fixed(b[0], 4), fixed(b[0], 4))],
        );
    }

    // A step of the first lever (price of packet, +1%): each class's shares
    // after it, from the job, equal the library's for the same scenario.
    let jobs = press(&mut app, KeyCode::Right);
    assert!(
        whatif(&app).classes.is_none(),
        "cleared until the job is back"
    );
    drain(&mut app, jobs);
    let w = whatif(&app);
    let sc = w.scenario(&m.spec);
    assert_eq!(sc.changes.len(), 1);
    let prep = prepare(&m.spec, &m.fit, &m.ds.table, &sc).unwrap();
    let want = by_class(&m.fit, Some(&prep)).unwrap();
    let got = w.classes.clone().unwrap();
    assert_eq!(got.after, want.after);
    assert!(
        want.after[0][0] < want.base[0][0],
        "dearer packets: fewer bought"
    );
    let s = screen(&app, 140, 50);
    for (b, a) in want.base.iter().zip(&want.after) {
        has(
            &packet(&s),
            &[&format!("{} → {}", fixed(b[0], 4), fixed(a[0], 4))],
        );
    }
    keys(&mut app, "b");
    assert!(!screen(&app, 140, 50).contains("shares by latent class"));
}

#[test]
fn a_model_without_classes_has_no_class_panels() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "5b");
    assert!(!whatif(&app).by_class);
    has(&screen(&app, 120, 40), &["the model has no latent classes"]);
    keys(&mut app, "2c");
    let s = screen(&app, 120, 40);
    has(&s, &["no latent classes to set side by side"]);
    assert!(!s.contains("classes side by side ·"), "{s}");
}
