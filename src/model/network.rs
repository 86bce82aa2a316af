//! The network: parts and drivers between named nodes, with the connectivity questions
//! validation and the analyses ask of it (one flood fill for all of them).

use std::collections::BTreeMap;

use crate::diag::Pos;
use crate::model::{Driver, Part};

#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    pub input: [String; 2],
    /// Display names of nodes voicekeep made up (where an inserted part meets the part it was
    /// put beside): a report names them in words, never by their internal name.
    pub labels: BTreeMap<String, String>,
    /// Where `input` is written in the job file.
    pub input_pos: Pos,
    pub parts: Vec<Part>,
    pub drivers: Vec<Driver>,
}

impl Network {
    /// A node as a report names it: the job's own name, or the words for one voicekeep made.
    pub fn node_label(&self, node: &str) -> String {
        self.labels.get(node).cloned().unwrap_or_else(|| node.to_string())
    }

    pub fn part(&self, name: &str) -> Option<&Part> {
        self.parts.iter().find(|p| p.name == name)
    }

    pub fn part_mut(&mut self, name: &str) -> Option<&mut Part> {
        self.parts.iter_mut().find(|p| p.name == name)
    }

    pub fn driver(&self, name: &str) -> Option<&Driver> {
        self.drivers.iter().find(|d| d.name == name)
    }

    /// Every terminal pair in the network, parts then drivers.
    pub fn branches(&self) -> impl Iterator<Item = (&str, &[String; 2])> {
        self.parts.iter().map(|p| (p.name.as_str(), &p.between)).chain(self.drivers.iter().map(|d| (d.name.as_str(), &d.between)))
    }

    /// The nodes reached from `start` through branches, never passing through a node of
    /// `stop` (which are reached, not crossed). The one flood fill every connectivity
    /// question uses.
    pub fn reach<'a>(&'a self, start: &[&'a str], stop: &[&str]) -> Vec<&'a str> {
        let mut names: Vec<&str> = start.to_vec();
        for (_, [a, b]) in self.branches() {
            for n in [a, b] {
                if !names.contains(&n.as_str()) {
                    names.push(n);
                }
            }
        }
        let index = |n: &str| names.iter().position(|m| *m == n).unwrap_or(0);
        let edges: Vec<(usize, usize)> = self.branches().map(|(_, [a, b])| (index(a), index(b))).collect();
        let starts: Vec<usize> = (0..start.len()).collect();
        let stops: Vec<bool> = names.iter().map(|n| stop.contains(n)).collect();
        let reached = flood(names.len(), &edges, &starts, &stops);
        names.iter().zip(reached).filter(|(_, r)| *r).map(|(n, _)| *n).collect()
    }

    /// The parts of a driver's own section: those joined to it without passing through the
    /// amplifier's terminals. In a parallel crossover that is the driver's filter; in a
    /// series crossover, everything.
    pub fn section(&self, driver: &str) -> Vec<&str> {
        let Some(d) = self.driver(driver) else { return Vec::new() };
        let stop = [self.input[0].as_str(), self.input[1].as_str()];
        let starts: Vec<&str> = d.between.iter().map(|s| s.as_str()).collect();
        let nodes = self.reach(&starts, &stop);
        let inner = |n: &String| nodes.contains(&n.as_str()) && !stop.contains(&n.as_str());
        self.parts.iter().filter(|p| inner(&p.between[0]) || inner(&p.between[1])).map(|p| p.name.as_str()).collect()
    }

    /// Connection problems: nodes only one terminal touches, and branches not reachable from
    /// the input. Each entry names the branch it concerns.
    /// Each problem is (the branch it concerns, the node it concerns, the message).
    pub fn connection_problems(&self) -> Vec<(String, Option<String>, String)> {
        let mut problems = Vec::new();
        let mut touches: BTreeMap<&str, Vec<&str>> = BTreeMap::new();
        for (name, [a, b]) in self.branches() {
            touches.entry(a).or_default().push(name);
            touches.entry(b).or_default().push(name);
        }
        for (node, names) in &touches {
            let is_input = *node == self.input[0] || *node == self.input[1];
            if names.len() == 1 && !is_input {
                problems.push((names[0].to_string(), Some(node.to_string()), format!("node {} is touched by {} alone, so no current can flow through it", node, names[0])));
            }
        }
        for (i, n) in self.input.iter().enumerate() {
            if !touches.contains_key(n.as_str()) {
                problems.push((
                    String::new(),
                    Some(n.clone()),
                    format!("input node {} ({}) is not connected to any part or driver", n, if i == 0 { "amplifier +" } else { "amplifier -" }),
                ));
            }
        }
        let reached = self.reach(&[self.input[0].as_str(), self.input[1].as_str()], &[]);
        for (name, [a, _]) in self.branches() {
            if !reached.contains(&a.as_str()) {
                problems.push((name.to_string(), None, format!("{} is not connected to the input ({} / {})", name, self.input[0], self.input[1])));
            }
        }
        // A driver needs a path to each amplifier terminal that does not pass through the
        // other one: tied to the - terminal alone (its feed removed) it would be silent.
        let (plus, minus) = (self.input[0].as_str(), self.input[1].as_str());
        let from_plus: Vec<&str> = self.reach(&[plus], &[minus]).into_iter().filter(|n| *n != minus).collect();
        let from_minus: Vec<&str> = self.reach(&[minus], &[plus]).into_iter().filter(|n| *n != plus).collect();
        for d in &self.drivers {
            let [a, b] = &d.between;
            let touches = |set: &[&str]| set.contains(&a.as_str()) || set.contains(&b.as_str());
            if reached.contains(&a.as_str()) && !(touches(&from_plus) && touches(&from_minus)) {
                let (lost, via) = if touches(&from_plus) { (minus, plus) } else { (plus, minus) };
                problems.push((d.name.clone(), None, format!("driver {} has no path to input node {lost} except through {via}, so it would be silent", d.name)));
            }
        }
        problems
    }
}

/// The flood fill every connectivity question uses (validation's, the sections', the
/// engine's floating-node check): which of `n` nodes are reached from `start` along `edges`,
/// never leaving a node marked in `stop` (stop nodes are reached, not crossed).
pub fn flood(n: usize, edges: &[(usize, usize)], start: &[usize], stop: &[bool]) -> Vec<bool> {
    let mut reached = vec![false; n];
    for &s in start {
        reached[s] = true;
    }
    let crosses = |k: usize| !stop.get(k).copied().unwrap_or(false);
    let mut changed = true;
    while changed {
        changed = false;
        for &(a, b) in edges {
            if reached[a] && !reached[b] && crosses(a) {
                reached[b] = true;
                changed = true;
            } else if reached[b] && !reached[a] && crosses(b) {
                reached[a] = true;
                changed = true;
            }
        }
    }
    reached
}
