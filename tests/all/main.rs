//! The one integration-test binary (polars is linked once). Each module checks
//! one room against an outside reference or a fact of the method.

mod common;
mod derivatives;
mod layouts;
mod references;
mod spec_errors;
