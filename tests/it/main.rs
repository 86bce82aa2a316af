//! voicekeep's integration tests: one binary (the CLI cases, the engine against ngspice and
//! textbook formulas, and the report).

mod analytic;
mod bad;
mod commands;
mod contract;
mod conventions;
mod design;
mod desk;
mod diagnose;
mod finite;
mod fixtures;
mod golden;
mod hostile;
mod hostile2;
mod interrupted;
mod invoice;
mod layout;
mod netlist;
mod nodal;
mod options;
mod pages;
mod pair;
mod parts;
mod pdf;
mod props;
mod reader;
mod reference;
mod report;
mod schematic;
mod service;
mod soundcard;
mod substitute;
mod terminals;
mod util;
mod verdicts;
mod wording;
