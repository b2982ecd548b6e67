//! The one integration-test binary (polars is linked once). Each module checks
//! one room against an outside reference or a fact of the method.

mod analysis;
mod analytic;
mod catalogue;
mod common;
mod demo_specs;
mod demo_tastes;
mod derivatives;
mod diagnostics;
mod draft;
mod edge_cases;
mod families;
mod fit_cli;
mod ghk;
mod hardening;
mod hardening_units;
mod layouts;
mod limits;
mod mixed;
mod mixed_analysis;
mod mixed_recovery;
mod mnp;
mod nested;
mod ordered;
mod progress;
mod recovery;
mod references;
mod report_html;
mod report_render;
mod scenarios;
mod spec_errors;
mod stream;
mod tastes;
mod tui;
mod wording;
