//! A hash-consed expression graph with exact, simplifying differentiation.
//!
//! Every node is stored once ([`Graph::intern`] returns the existing id for a node already
//! present), so common subexpressions of residuals and their derivatives are shared, and a node's
//! children always have smaller ids than the node itself. The graph is therefore in topological
//! order by construction, which lets [`super::Tape`] compile it without recursion.
//!
//! Differentiation rules are the textbook ones; for the kinked functions the derivative is the
//! right-hand one (`abs'(0) = 1`; `min(a, b)` follows `a` on a tie, as does `max`; `sign' = 0`),
//! which is what spec §4 asks of the linearization.

use std::collections::HashMap;

use crate::model::{BinaryOp, Expr, Function, Function2};

/// Index of a node in a [`Graph`].
pub type NodeId = u32;

/// A leaf a residual can be differentiated by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Leaf {
    /// Endogenous variable `index` at date `t + offset`.
    Variable { index: usize, offset: i32 },
    /// Innovation `index` at date `t + offset` (`offset <= 0`).
    Innovation { index: usize, offset: i32 },
    /// The steady-state value `x[ss]` of endogenous variable `index`.
    SteadyState(usize),
}

/// One node of the graph. Constants are stored by their bit pattern so nodes can be hashed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Node {
    Const(u64),
    Param(u32),
    Leaf(Leaf),
    Neg(NodeId),
    Add(NodeId, NodeId),
    Sub(NodeId, NodeId),
    Mul(NodeId, NodeId),
    Div(NodeId, NodeId),
    Pow(NodeId, NodeId),
    Call(Function, NodeId),
    Call2(Function2, NodeId, NodeId),
    /// Right-continuous Heaviside step: 1 when the argument is >= 0, else 0 (NaN stays NaN).
    Step(NodeId),
}

/// The graph: nodes in creation (hence topological) order.
#[derive(Debug, Clone, Default)]
pub struct Graph {
    nodes: Vec<Node>,
    index: HashMap<Node, NodeId>,
}

impl Graph {
    pub fn new() -> Self {
        Self::default()
    }

    /// All nodes, children before parents.
    pub fn nodes(&self) -> &[Node] {
        &self.nodes
    }

    pub fn node(&self, id: NodeId) -> Node {
        self.nodes[id as usize]
    }

    /// Adds `node` unless an equal node exists; returns its id either way.
    pub fn intern(&mut self, node: Node) -> NodeId {
        if let Some(&id) = self.index.get(&node) {
            return id;
        }
        let id = self.nodes.len() as NodeId;
        self.nodes.push(node);
        self.index.insert(node, id);
        id
    }

    /// The constant `c` (negative zero is stored as zero).
    pub fn constant(&mut self, c: f64) -> NodeId {
        let c = if c == 0.0 { 0.0 } else { c };
        self.intern(Node::Const(c.to_bits()))
    }

    /// The value of `id` if it is a constant.
    pub fn as_const(&self, id: NodeId) -> Option<f64> {
        match self.nodes[id as usize] {
            Node::Const(bits) => Some(f64::from_bits(bits)),
            _ => None,
        }
    }

    fn is_const(&self, id: NodeId, c: f64) -> bool {
        self.as_const(id) == Some(c)
    }

    pub fn leaf(&mut self, leaf: Leaf) -> NodeId {
        self.intern(Node::Leaf(leaf))
    }

    pub fn neg(&mut self, a: NodeId) -> NodeId {
        if let Some(c) = self.as_const(a) {
            return self.constant(-c);
        }
        if let Node::Neg(inner) = self.node(a) {
            return inner;
        }
        self.intern(Node::Neg(a))
    }

    pub fn add(&mut self, a: NodeId, b: NodeId) -> NodeId {
        match (self.as_const(a), self.as_const(b)) {
            (Some(x), Some(y)) => return self.constant(x + y),
            (Some(0.0), None) => return b,
            (None, Some(0.0)) => return a,
            _ => {}
        }
        if let Node::Neg(nb) = self.node(b) {
            return self.sub(a, nb);
        }
        let (a, b) = if a <= b { (a, b) } else { (b, a) };
        self.intern(Node::Add(a, b))
    }

    pub fn sub(&mut self, a: NodeId, b: NodeId) -> NodeId {
        if a == b {
            return self.constant(0.0);
        }
        match (self.as_const(a), self.as_const(b)) {
            (Some(x), Some(y)) => return self.constant(x - y),
            (Some(0.0), None) => return self.neg(b),
            (None, Some(0.0)) => return a,
            _ => {}
        }
        if let Node::Neg(nb) = self.node(b) {
            return self.add(a, nb);
        }
        self.intern(Node::Sub(a, b))
    }

    pub fn mul(&mut self, a: NodeId, b: NodeId) -> NodeId {
        match (self.as_const(a), self.as_const(b)) {
            (Some(x), Some(y)) => return self.constant(x * y),
            (Some(0.0), _) => return a,
            (_, Some(0.0)) => return b,
            (Some(1.0), _) => return b,
            (_, Some(1.0)) => return a,
            (Some(-1.0), _) => return self.neg(b),
            (_, Some(-1.0)) => return self.neg(a),
            _ => {}
        }
        // Pull negations out so that -a * b and a * -b share one node.
        if let Node::Neg(na) = self.node(a) {
            let m = self.mul(na, b);
            return self.neg(m);
        }
        if let Node::Neg(nb) = self.node(b) {
            let m = self.mul(a, nb);
            return self.neg(m);
        }
        let (a, b) = if a <= b { (a, b) } else { (b, a) };
        self.intern(Node::Mul(a, b))
    }

    pub fn div(&mut self, a: NodeId, b: NodeId) -> NodeId {
        match (self.as_const(a), self.as_const(b)) {
            (Some(x), Some(y)) if y != 0.0 => return self.constant(x / y),
            (Some(0.0), _) => return a,
            (_, Some(1.0)) => return a,
            (_, Some(-1.0)) => return self.neg(a),
            _ => {}
        }
        if a == b {
            return self.constant(1.0);
        }
        self.intern(Node::Div(a, b))
    }

    pub fn pow(&mut self, a: NodeId, b: NodeId) -> NodeId {
        match (self.as_const(a), self.as_const(b)) {
            (Some(x), Some(y)) => return self.constant(crate::model::expr::pow(x, y)),
            (_, Some(1.0)) => return a,
            (_, Some(0.0)) => return self.constant(1.0),
            _ => {}
        }
        self.intern(Node::Pow(a, b))
    }

    pub fn call(&mut self, f: Function, a: NodeId) -> NodeId {
        if let Some(x) = self.as_const(a) {
            return self.constant(f.apply(x));
        }
        self.intern(Node::Call(f, a))
    }

    pub fn call2(&mut self, f: Function2, a: NodeId, b: NodeId) -> NodeId {
        if let (Some(x), Some(y)) = (self.as_const(a), self.as_const(b)) {
            return self.constant(f.apply(x, y));
        }
        self.intern(Node::Call2(f, a, b))
    }

    pub fn step(&mut self, a: NodeId) -> NodeId {
        if let Some(x) = self.as_const(a) {
            return self.constant(step(x));
        }
        self.intern(Node::Step(a))
    }

    /// Adds the expression tree `e` (recursion bounded by [`crate::model::MAX_EXPR_DEPTH`]).
    pub fn from_expr(&mut self, e: &Expr) -> NodeId {
        match e {
            Expr::Number(v) => self.constant(*v),
            Expr::Parameter(i) => self.intern(Node::Param(*i as u32)),
            Expr::Variable { index, offset } => self.leaf(Leaf::Variable {
                index: *index,
                offset: *offset,
            }),
            Expr::Innovation { index, offset } => self.leaf(Leaf::Innovation {
                index: *index,
                offset: *offset,
            }),
            Expr::SteadyState(i) => self.leaf(Leaf::SteadyState(*i)),
            Expr::Neg(a) => {
                let a = self.from_expr(a);
                self.neg(a)
            }
            Expr::Binary(op, a, b) => {
                let a = self.from_expr(a);
                let b = self.from_expr(b);
                match op {
                    BinaryOp::Add => self.add(a, b),
                    BinaryOp::Sub => self.sub(a, b),
                    BinaryOp::Mul => self.mul(a, b),
                    BinaryOp::Div => self.div(a, b),
                    BinaryOp::Pow => self.pow(a, b),
                }
            }
            Expr::Call(f, a) => {
                let a = self.from_expr(a);
                self.call(*f, a)
            }
            Expr::Call2(f, a, b) => {
                let a = self.from_expr(a);
                let b = self.from_expr(b);
                self.call2(*f, a, b)
            }
        }
    }

    /// The leaves `root` depends on, sorted, each once (no recursion: a sweep down the ids).
    pub fn leaves_of(&self, root: NodeId) -> Vec<Leaf> {
        let mut mark = vec![false; root as usize + 1];
        mark[root as usize] = true;
        let mut out = Vec::new();
        for id in (0..=root as usize).rev() {
            if !mark[id] {
                continue;
            }
            match self.nodes[id] {
                Node::Leaf(l) => out.push(l),
                n => children(n, |c| mark[c as usize] = true),
            }
        }
        out.sort();
        out.dedup();
        out
    }

    /// Whether `root` contains a node of kind abs, sign, min or max (a possible kink).
    pub fn has_kink(&self, root: NodeId) -> bool {
        let mut mark = vec![false; root as usize + 1];
        mark[root as usize] = true;
        for id in (0..=root as usize).rev() {
            if !mark[id] {
                continue;
            }
            match self.nodes[id] {
                Node::Call(Function::Abs | Function::Sign, _) | Node::Call2(..) => return true,
                n => children(n, |c| mark[c as usize] = true),
            }
        }
        false
    }

    /// The exact derivative of `root` with respect to `wrt`, simplified. Returns the node of the
    /// derivative (a constant zero when `root` does not contain `wrt`). `memo` must be empty or
    /// hold derivatives by the same `wrt` from earlier calls.
    pub fn diff(&mut self, root: NodeId, wrt: Leaf, memo: &mut HashMap<NodeId, NodeId>) -> NodeId {
        if let Some(&d) = memo.get(&root) {
            return d;
        }
        let zero = self.constant(0.0);
        let one = self.constant(1.0);
        let d = match self.node(root) {
            Node::Const(_) | Node::Param(_) => zero,
            Node::Leaf(l) => {
                if l == wrt {
                    one
                } else {
                    zero
                }
            }
            Node::Neg(a) => {
                let da = self.diff(a, wrt, memo);
                self.neg(da)
            }
            Node::Add(a, b) => {
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                self.add(da, db)
            }
            Node::Sub(a, b) => {
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                self.sub(da, db)
            }
            Node::Mul(a, b) => {
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                let t1 = self.mul(da, b);
                let t2 = self.mul(a, db);
                self.add(t1, t2)
            }
            Node::Div(a, b) => {
                // (a/b)' = a'/b - a b' / b^2 = (a' - (a/b) b') / b
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                if self.is_const(db, 0.0) {
                    self.div(da, b)
                } else {
                    let q = self.div(a, b);
                    let qdb = self.mul(q, db);
                    let num = self.sub(da, qdb);
                    self.div(num, b)
                }
            }
            Node::Pow(a, b) => {
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                let mut total = zero;
                if !self.is_const(da, 0.0) {
                    // b * a^(b-1) * a'
                    let bm1 = self.sub(b, one);
                    let p = self.pow(a, bm1);
                    let bp = self.mul(b, p);
                    total = self.mul(bp, da);
                }
                if !self.is_const(db, 0.0) {
                    // a^b * ln(a) * b'
                    let ln_a = self.call(Function::Ln, a);
                    let t = self.mul(root, ln_a);
                    let t = self.mul(t, db);
                    total = self.add(total, t);
                }
                total
            }
            Node::Call(f, a) => {
                let da = self.diff(a, wrt, memo);
                if self.is_const(da, 0.0) {
                    zero
                } else {
                    let outer = match f {
                        Function::Exp => root,
                        Function::Ln => self.div(one, a),
                        Function::Log10 => {
                            let ln10 = self.constant(std::f64::consts::LN_10);
                            let den = self.mul(a, ln10);
                            self.div(one, den)
                        }
                        Function::Sqrt => {
                            let two = self.constant(2.0);
                            let den = self.mul(two, root);
                            self.div(one, den)
                        }
                        Function::Abs => {
                            // right derivative: +1 for a >= 0, -1 below
                            let s = self.step(a);
                            let two = self.constant(2.0);
                            let s2 = self.mul(two, s);
                            self.sub(s2, one)
                        }
                        Function::Sign => zero,
                        Function::NormCdf => self.call(Function::NormPdf, a),
                        Function::NormPdf => {
                            let m = self.mul(a, root);
                            self.neg(m)
                        }
                    };
                    self.mul(outer, da)
                }
            }
            Node::Call2(f, a, b) => {
                let da = self.diff(a, wrt, memo);
                let db = self.diff(b, wrt, memo);
                if da == db {
                    da
                } else {
                    // min follows a when a <= b; max follows a when a >= b.
                    let gap = match f {
                        Function2::Min => self.sub(b, a),
                        Function2::Max => self.sub(a, b),
                    };
                    let s = self.step(gap);
                    let diff = self.sub(da, db);
                    let t = self.mul(diff, s);
                    self.add(db, t)
                }
            }
            Node::Step(_) => zero,
        };
        memo.insert(root, d);
        d
    }
}

/// Right-continuous Heaviside step (NaN stays NaN).
pub fn step(x: f64) -> f64 {
    if x >= 0.0 {
        1.0
    } else if x < 0.0 {
        0.0
    } else {
        f64::NAN
    }
}

/// Calls `f` on each child of `n`.
pub(crate) fn children(n: Node, mut f: impl FnMut(NodeId)) {
    match n {
        Node::Const(_) | Node::Param(_) | Node::Leaf(_) => {}
        Node::Neg(a) | Node::Call(_, a) | Node::Step(a) => f(a),
        Node::Add(a, b)
        | Node::Sub(a, b)
        | Node::Mul(a, b)
        | Node::Div(a, b)
        | Node::Pow(a, b)
        | Node::Call2(_, a, b) => {
            f(a);
            f(b);
        }
    }
}
