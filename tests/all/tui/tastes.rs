//! The estimates view of correlated tastes and of willingness-to-pay space:
//! the grid of correlations holds the library's figures
//! (`analysis::correlation::correlations`), with the heat glyph of each
//! cell's level; the price scale and each value's unit stand beside the
//! rows, a ratio's note below it; neither appears for an independent, preference-space model.

use sharecast::report::heat::CORRELATION_CUTS;
use sharecast::tui::theme::Theme;

use super::{demo, has, keys, model, screen};
use crate::common::{commute_variant, express_variant, scratch, WTP_CORRELATED};

#[test]
fn the_estimates_view_shows_the_correlation_grid_and_the_units_of_values() {
    let dir = scratch("tui-tastes");
    let spec = express_variant(&dir, "wtp_mixed.toml", WTP_CORRELATED, Some("lognormal"));
    let mut app = demo(&[&spec]);
    keys(&mut app, "2");
    let s = screen(&app, 160, 90);
    std::fs::write(dir.join("screen.txt"), &s).unwrap();
    let m = model(&spec);
    let c = sharecast::analysis::correlation::correlations(&m.fit).unwrap();
    has(
        &s,
        &[
            "correlated tastes",
            "normal of ↓ / normal of →",
            "coefficient ↓ / coefficient →",
            "willingness-to-pay space: `cost` is the price scale",
            "price scale or value in",
            "cost per unit of time",
            "a value in cost per unit of time",
        ],
    );
    // time's row of the normals' grid: corr(time, asc_rail) and
    // corr(time, cost) with the glyph of their level, a dash on the diagonal.
    let grid: Vec<&str> = s
        .lines()
        .skip_while(|l| !l.contains("normal of ↓ / normal of →"))
        .collect();
    let time = grid
        .iter()
        .find(|l| l.trim_start_matches('│').trim_start().starts_with("time "))
        .unwrap();
    for j in [0, 2] {
        let v = c.correlations[1][j].value;
        let cell = format!("{v:+.3} {}", Theme::glyph(v, &CORRELATION_CUTS));
        assert!(time.contains(&cell), "`{cell}` not in `{time}`");
    }
    assert!(time.contains('—'), "{time}");
    // The value ratio over the price carries its note (cut at the panel's edge).
    has(
        &s,
        &["↳ the model is in willingness-to-pay space: `time` is itself"],
    );
    let t = c.independence.as_ref().unwrap();
    has(&s, &[&format!("statistic {:.2}, {} df", t.statistic, t.df)]);

    // A preference-space logit: no grid, no units.
    let spec = commute_variant(&dir, "preference.toml", "");
    let mut app = demo(&[&spec]);
    keys(&mut app, "2");
    let s = screen(&app, 160, 60);
    for gone in ["correlated tastes", "willingness-to-pay", "price scale"] {
        assert!(!s.contains(gone), "`{gone}` on the screen:\n{s}");
    }
}
