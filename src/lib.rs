//! sharecast: discrete-choice models from a TOML spec, in rooms that pass data one way:
//! spec -> data -> design -> estimate -> analysis -> scenario -> report / tui.

pub mod analysis;
pub mod bench;
pub mod cli;
pub mod data;
pub mod demo;
pub mod design;
pub mod error;
pub mod estimate;
pub mod report;
pub mod rng;
pub mod scenario;
pub mod spec;
pub mod tui;

pub use error::{Error, Result};
