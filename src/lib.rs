//! voicekeep: predicts how re-capping a passive loudspeaker crossover shifts each driver's
//! level and the amplifier's load, solves the compensating resistors, and writes a dated,
//! reproducible service report.
//!
//! The pipeline, each stage a plain function from one owned type to the next:
//! job file --[`job::load`]--> [`model::Job`] --[`analysis::analyse_job`]--> [`analysis::Outcome`]
//! --[`report::render_outcome`]--> PDF bytes --[`report::write_atomically`]--> file.

pub mod analysis;
pub mod cli;
pub mod diag;
pub mod engine;
pub mod files;
pub mod index;
pub mod job;
pub mod model;
pub mod money;
pub mod netlist;
pub mod report;
pub mod results;
pub mod schematic;
pub mod soundcard;
pub mod text;
pub mod units;
