//! sharecast: discrete-choice models from a TOML spec, in rooms that pass data one way:
//! spec -> data -> design -> model -> estimate -> analysis -> scenario -> report,
//! with the library workspace (open, fit or restore) under the command line,
//! the workbench and the benchmark.

pub mod analysis;
pub mod bench;
pub mod cli;
pub mod data;
pub mod demo;
pub mod design;
pub mod draft;
pub mod error;
pub mod estimate;
pub mod experiment;
pub mod model;
pub mod progress;
pub mod report;
pub mod rng;
pub mod scenario;
pub mod spec;
pub mod tui;
pub mod workspace;

pub use error::{Error, Result};
