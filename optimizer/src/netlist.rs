//! Circuit as data: nodes and elements of one front-end design. The same
//! netlist feeds the DC solver ([`crate::mna`]), the SPICE export, the
//! schematic and the BOM.
//!
//! Conventions (the SPICE ones, so export is a straight copy):
//! - node 0 is ground;
//! - a voltage source from `a` to `b` holds `V(a) - V(b) = volts`;
//! - a current source from `a` to `b` carries `amps` from `a` through the
//!   source into `b` (it draws from `a` and feeds `b`);
//! - an op-amp section is a voltage-controlled voltage source:
//!   `V(out) = Aol * (V(plus) - V(minus))`, held in the solver as
//!   `g * V(out) = V(plus) - V(minus)` with `g = 1/Aol`, so `g = 0` is
//!   the ideal op-amp.

/// Index of a node; 0 is ground.
pub type Node = usize;

/// What an element is, with its value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ElementKind {
    /// A resistor of this many ohms between `nodes[0]` and `nodes[1]`.
    Resistor {
        /// Resistance.
        ohms: f64,
    },
    /// A DC voltage source, `V(nodes[0]) - V(nodes[1]) = volts`.
    VoltageSource {
        /// Source voltage.
        volts: f64,
    },
    /// A DC current source from `nodes[0]` to `nodes[1]`.
    CurrentSource {
        /// Source current.
        amps: f64,
    },
    /// An op-amp gain block: plus `nodes[0]`, minus `nodes[1]`, output
    /// `nodes[2]` (referred to ground).
    OpAmp {
        /// Reciprocal open-loop gain; 0 is ideal.
        inverse_gain: f64,
    },
    /// A capacitor of this many farads between `nodes[0]` and `nodes[1]`:
    /// open at DC ([`crate::mna`]), an admittance `j w C` in the AC
    /// analysis ([`crate::mna_ac`]).
    Capacitor {
        /// Capacitance.
        farads: f64,
    },
}

/// One element.
#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    /// SPICE element name (`R3`, `VOS_U1A`, `EU1A`, ...).
    pub name: String,
    /// Kind and value.
    pub kind: ElementKind,
    /// Connected nodes (two, or three for an op-amp).
    pub nodes: [Node; 3],
    /// The subcircuit this element sits in (an integrated part's insides),
    /// or `None` at top level.
    pub group: Option<String>,
}

/// A netlist: named nodes and elements.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Netlist {
    /// Node names; index 0 is `"0"` (ground).
    pub node_names: Vec<String>,
    /// Elements in insertion order.
    pub elements: Vec<Element>,
    /// Node names to indices (kept by [`Netlist::node`]).
    index: std::collections::HashMap<String, Node>,
}

impl Netlist {
    /// An empty netlist with only the ground node.
    pub fn new() -> Self {
        let mut index = std::collections::HashMap::new();
        index.insert("0".to_string(), 0);
        Netlist {
            node_names: vec!["0".to_string()],
            elements: Vec::new(),
            index,
        }
    }

    /// The node of this name, created if new.
    pub fn node(&mut self, name: &str) -> Node {
        if let Some(&i) = self.index.get(name) {
            return i;
        }
        self.node_names.push(name.to_string());
        let i = self.node_names.len() - 1;
        self.index.insert(name.to_string(), i);
        i
    }

    /// The node of this name, if it exists.
    pub fn find_node(&self, name: &str) -> Option<Node> {
        self.index.get(name).copied()
    }

    /// Add an element; returns its index.
    pub fn add(&mut self, name: &str, kind: ElementKind, nodes: [Node; 3]) -> usize {
        self.elements.push(Element {
            name: name.to_string(),
            kind,
            nodes,
            group: None,
        });
        self.elements.len() - 1
    }

    /// Add an element inside a subcircuit group.
    pub fn add_in(
        &mut self,
        group: &str,
        name: &str,
        kind: ElementKind,
        nodes: [Node; 3],
    ) -> usize {
        let i = self.add(name, kind, nodes);
        self.elements[i].group = Some(group.to_string());
        i
    }

    /// Add a resistor.
    pub fn resistor(&mut self, name: &str, a: Node, b: Node, ohms: f64) -> usize {
        self.add(name, ElementKind::Resistor { ohms }, [a, b, 0])
    }

    /// Add a DC voltage source.
    pub fn vsource(&mut self, name: &str, a: Node, b: Node, volts: f64) -> usize {
        self.add(name, ElementKind::VoltageSource { volts }, [a, b, 0])
    }

    /// Add a capacitor.
    pub fn capacitor(&mut self, name: &str, a: Node, b: Node, farads: f64) -> usize {
        self.add(name, ElementKind::Capacitor { farads }, [a, b, 0])
    }

    /// Give an existing node a new name (the old name no longer finds it);
    /// `false` if `new` is taken or `node` does not exist.
    pub fn rename_node(&mut self, node: Node, new: &str) -> bool {
        if node == 0 || node >= self.node_names.len() || self.index.contains_key(new) {
            return false;
        }
        let old = std::mem::replace(&mut self.node_names[node], new.to_string());
        self.index.remove(&old);
        self.index.insert(new.to_string(), node);
        true
    }

    /// Add a DC current source.
    pub fn isource(&mut self, name: &str, a: Node, b: Node, amps: f64) -> usize {
        self.add(name, ElementKind::CurrentSource { amps }, [a, b, 0])
    }

    /// Index of the element of this name.
    pub fn element(&self, name: &str) -> Option<usize> {
        self.elements.iter().position(|e| e.name == name)
    }

    /// Number of extra unknowns (branch currents) the solver needs.
    pub fn branch_count(&self) -> usize {
        self.elements
            .iter()
            .filter(|e| {
                matches!(
                    e.kind,
                    ElementKind::VoltageSource { .. } | ElementKind::OpAmp { .. }
                )
            })
            .count()
    }
}
