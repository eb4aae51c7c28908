#![warn(missing_docs)]
//! foldcheck: a linter for the configuration files of data-acquisition rigs.
//!
//! The pipeline runs one way: source → YAML tree with spans ([`source`]) → typed rig
//! model ([`model`]) → resolved model: references, clock rates, chains ([`resolve`]) →
//! one analysis per channel ([`analysis`]) → rules ([`rules`]) → findings ([`finding`]) → renderers ([`report`]). [`campaign`]
//! drives it over files and directories.

pub mod analysis;
pub mod campaign;
pub mod declared;
pub mod diff;
pub mod finding;
pub mod fingerprint;
pub mod fix;
pub mod inspect;
pub mod lsp;
pub mod model;
pub mod report;
pub mod resolve;
pub mod root;
pub mod rules;
pub mod settings;
pub mod sheet;
pub mod signal;
pub mod source;
pub mod suppress;
pub mod words;
