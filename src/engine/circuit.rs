//! A network ready to solve: nodes numbered (node 0 the amplifier's return), elements with
//! their models, and the elimination plan fixed by the topology.

use super::{ElementModel, Kernel, Plan, SolveError};
use crate::model::{Amplifier, Network};

#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    pub name: String,
    pub a: usize,
    pub b: usize,
    pub model: ElementModel,
    pub is_driver: bool,
}

/// A network ready to solve: nodes numbered, node 0 the reference (the amplifier's -).
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    pub nodes: Vec<String>,
    pub input: usize,
    pub source_ohm: f64,
    pub elements: Vec<Element>,
    pub plan: Plan,
}

impl Circuit {
    pub fn from_network(net: &Network, amp: &Amplifier) -> Result<Circuit, SolveError> {
        let mut nodes = vec![net.input[1].clone(), net.input[0].clone()];
        let index = |name: &str, nodes: &mut Vec<String>| match nodes.iter().position(|n| n == name) {
            Some(i) => i,
            None => {
                nodes.push(name.to_string());
                nodes.len() - 1
            }
        };
        let mut elements = Vec::new();
        for p in &net.parts {
            let a = index(&p.between[0], &mut nodes);
            let b = index(&p.between[1], &mut nodes);
            elements.push(Element { name: p.name.clone(), a, b, model: ElementModel::from_part(p), is_driver: false });
        }
        for d in &net.drivers {
            let a = index(&d.between[0], &mut nodes);
            let b = index(&d.between[1], &mut nodes);
            elements.push(Element { name: d.name.clone(), a, b, model: ElementModel::Driver(d.model.clone()), is_driver: true });
        }
        let mut c = Circuit { nodes, input: 1, source_ohm: amp.output_ohm, elements, plan: Plan::default() };
        c.check_floating()?;
        c.plan = Plan::new(&c);
        Ok(c)
    }

    pub(crate) fn check_floating(&self) -> Result<(), SolveError> {
        let edges: Vec<(usize, usize)> = self.elements.iter().map(|e| (e.a, e.b)).collect();
        let reached = crate::model::flood(self.nodes.len(), &edges, &[0, self.input], &[]);
        let nodes: Vec<String> = (0..self.nodes.len()).filter(|i| !reached[*i]).map(|i| self.nodes[i].clone()).collect();
        if nodes.is_empty() {
            return Ok(());
        }
        let parts = self.elements.iter().filter(|e| !reached[e.a] || !reached[e.b]).map(|e| e.name.clone()).collect();
        Err(SolveError::Floating { nodes, parts })
    }

    pub fn element(&self, name: &str) -> Option<usize> {
        self.elements.iter().position(|e| e.name == name)
    }

    pub fn size(&self) -> usize {
        self.nodes.len()
    }

    /// Each element's [`Kernel`], in element order.
    pub fn kernels(&self) -> Vec<Kernel<'_>> {
        self.elements.iter().map(|e| Kernel::of(&e.model)).collect()
    }
}
