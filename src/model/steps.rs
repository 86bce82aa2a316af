//! Bench readings and change steps, and how each scenario's network is built from the
//! design: as found (every reading applied), as left (every step applied in order).

use crate::diag::Pos;
use crate::model::{DriverPatch, Network, Part, PartPatch};

#[derive(Debug, Clone, PartialEq)]
pub enum Patch {
    Part(PartPatch),
    Driver(DriverPatch),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    pub target: String,
    pub patch: Patch,
    pub pos: Pos,
}

#[derive(Debug, Clone, PartialEq)]
pub enum ChangeStep {
    Replace {
        target: String,
        with: Patch,
    },
    /// A new part in series where part `next_to` meets `node`.
    Insert {
        part: Part,
        node: String,
        next_to: String,
    },
    Remove {
        target: String,
    },
    Add {
        parts: Vec<Part>,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Change {
    /// 1-based position in the `changes` list, for messages.
    pub number: usize,
    pub step: ChangeStep,
    pub pos: Pos,
}

/// Why a change step could not be applied.
#[derive(Debug, Clone, PartialEq)]
pub struct StepError {
    pub number: usize,
    pub pos: Pos,
    pub message: String,
}

/// The network as designed with every bench reading applied.
pub fn found(designed: &Network, measured: &[Reading]) -> Network {
    let mut net = designed.clone();
    for r in measured {
        match &r.patch {
            Patch::Part(p) => {
                if let Some(part) = net.part_mut(&r.target) {
                    p.apply_reading(part);
                }
            }
            Patch::Driver(p) => {
                if let Some(d) = net.drivers.iter_mut().find(|d| d.name == r.target) {
                    p.apply(d);
                }
            }
        }
    }
    net
}

/// The as-found network with the change steps applied in order (`auto` values unsolved).
pub fn left_unsolved(designed: &Network, measured: &[Reading], changes: &[Change]) -> Result<Network, StepError> {
    let mut net = found(designed, measured);
    for c in changes {
        apply_step(&mut net, c, designed)?;
    }
    Ok(net)
}

fn apply_step(net: &mut Network, c: &Change, designed: &Network) -> Result<(), StepError> {
    let err = |message: String| StepError { number: c.number, pos: c.pos, message };
    match &c.step {
        ChangeStep::Replace { target, with } => match with {
            Patch::Part(p) => {
                let part = net.part_mut(target).ok_or_else(|| err(format!("replace: there is no part {target} at this point (was it removed by an earlier step?)")))?;
                p.apply_replacement(part, designed.part(target));
            }
            Patch::Driver(p) => {
                let d = net.drivers.iter_mut().find(|d| &d.name == target).ok_or_else(|| err(format!("replace: there is no driver {target}")))?;
                p.apply(d);
            }
        },
        ChangeStep::Remove { target } => {
            let before = net.parts.len();
            net.parts.retain(|p| &p.name != target);
            if net.parts.len() == before {
                return Err(err(format!("remove: there is no part {target} at this point")));
            }
        }
        ChangeStep::Add { parts } => {
            for p in parts {
                if net.part(&p.name).is_some() || net.driver(&p.name).is_some() {
                    return Err(err(format!("add: {} is already in the network; choose a new reference", p.name)));
                }
                net.parts.push(p.clone());
            }
        }
        ChangeStep::Insert { part, node, next_to } => {
            if net.part(&part.name).is_some() || net.driver(&part.name).is_some() {
                return Err(err(format!("insert: {} is already in the network; choose a new reference", part.name)));
            }
            let new_node = format!("{}~{}", part.name, node);
            net.labels.insert(new_node.clone(), format!("the {}-{next_to} junction", part.name));
            let target = match net.parts.iter_mut().find(|p| &p.name == next_to) {
                Some(p) => &mut p.between,
                None => match net.drivers.iter_mut().find(|d| &d.name == next_to) {
                    Some(d) => &mut d.between,
                    None => return Err(err(format!("insert: there is no part or driver {next_to} to insert beside"))),
                },
            };
            let Some(slot) = target.iter_mut().find(|n| *n == node) else {
                return Err(err(format!("insert: {next_to} does not touch node {node} (it sits between {} and {})", target[0], target[1])));
            };
            *slot = new_node.clone();
            let mut p = part.clone();
            p.between = [node.clone(), new_node];
            net.parts.push(p);
        }
    }
    Ok(())
}
