//! The workbench's views: one file each, listed once in `all`, in the order
//! of the tabs and the number keys. The tabs, number keys, help overlay and
//! status hints are generated from this list (see DEVELOPERS.md to add one).

pub mod compare;
pub mod curve;
pub mod diversion;
pub mod elasticities;
pub mod estimates;
pub mod overview;
pub mod whatif;

use super::part::View;

/// Every view, in tab order.
pub fn all() -> Vec<Box<dyn View>> {
    vec![
        Box::new(overview::Overview::default()),
        Box::new(estimates::Estimates::default()),
        Box::new(elasticities::Elasticities::default()),
        Box::new(diversion::Diversion::default()),
        Box::new(whatif::WhatIfView::default()),
        Box::new(curve::CurveView::default()),
        Box::new(compare::Compare::default()),
    ]
}
