//! Structural block-triangular decomposition of a square sparse system.
//!
//! Contract: given which variables each equation involves, find a matching of equations to
//! variables (each equation paired with one variable it contains; Kuhn's augmenting paths, run
//! with an explicit stack), then the strongly connected components of "variable j needs variable k"
//! (the equation matched to j contains k), by Tarjan's algorithm (Tarjan 1972, "Depth-first search
//! and linear graph algorithms", SIAM J. Comput. 1), also with an explicit stack. Tarjan emits
//! components with everything they depend on already emitted, which is the order in which the
//! blocks can be solved one after another (Duff and Reid 1978, "An implementation of Tarjan's
//! algorithm for the block triangularization of a matrix", ACM TOMS 4). Returns `None` when no
//! perfect matching exists (the system is structurally singular).

const NONE: usize = usize::MAX;

/// One diagonal block: its equations and variables (equation `equations[i]` is matched to
/// `variables[i]`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Block {
    pub equations: Vec<usize>,
    pub variables: Vec<usize>,
}

/// Blocks in solving order for the `n` x `n` pattern `adj[equation] = variables` (see the module
/// doc), or `None` without a perfect matching.
pub fn block_triangular(n: usize, adj: &[Vec<usize>]) -> Option<Vec<Block>> {
    if adj.len() != n || adj.iter().flatten().any(|&v| v >= n) {
        return None;
    }
    let mut eq_of_var = vec![NONE; n];
    let mut var_of_eq = vec![NONE; n];
    let mut stamp = vec![NONE; n];
    for root in 0..n {
        // Cheap first pass: a free variable of the root itself.
        if let Some(&v) = adj[root].iter().find(|&&v| eq_of_var[v] == NONE) {
            eq_of_var[v] = root;
            var_of_eq[root] = v;
            continue;
        }
        let mut stack: Vec<(usize, usize)> = vec![(root, 0)];
        let mut via: Vec<usize> = Vec::new();
        let mut found = NONE;
        while let Some(top) = stack.last_mut() {
            let eq = top.0;
            if top.1 < adj[eq].len() {
                let v = adj[eq][top.1];
                top.1 += 1;
                if stamp[v] == root {
                    continue;
                }
                stamp[v] = root;
                if eq_of_var[v] == NONE {
                    found = v;
                    break;
                }
                via.push(v);
                stack.push((eq_of_var[v], 0));
            } else {
                stack.pop();
                via.pop();
            }
        }
        if found == NONE {
            return None;
        }
        let top = stack.len() - 1;
        for i in 0..=top {
            let eq = stack[i].0;
            let var = if i == top { found } else { via[i] };
            var_of_eq[eq] = var;
            eq_of_var[var] = eq;
        }
    }
    // Tarjan on variables: j -> k for k in adj[eq_of_var[j]].
    let mut index = vec![NONE; n];
    let mut low = vec![0usize; n];
    let mut on_stack = vec![false; n];
    let mut s: Vec<usize> = Vec::new();
    let mut counter = 0usize;
    let mut blocks = Vec::new();
    for start in 0..n {
        if index[start] != NONE {
            continue;
        }
        let mut call: Vec<(usize, usize)> = vec![(start, 0)];
        index[start] = counter;
        low[start] = counter;
        counter += 1;
        s.push(start);
        on_stack[start] = true;
        while let Some(top) = call.last_mut() {
            let v = top.0;
            let succ = &adj[eq_of_var[v]];
            if top.1 < succ.len() {
                let w = succ[top.1];
                top.1 += 1;
                if index[w] == NONE {
                    index[w] = counter;
                    low[w] = counter;
                    counter += 1;
                    s.push(w);
                    on_stack[w] = true;
                    call.push((w, 0));
                } else if on_stack[w] {
                    low[v] = low[v].min(index[w]);
                }
            } else {
                call.pop();
                if low[v] == index[v] {
                    let mut vars = Vec::new();
                    while let Some(w) = s.pop() {
                        on_stack[w] = false;
                        vars.push(w);
                        if w == v {
                            break;
                        }
                    }
                    vars.sort_unstable();
                    let equations = vars.iter().map(|&w| eq_of_var[w]).collect();
                    blocks.push(Block {
                        equations,
                        variables: vars,
                    });
                }
                if let Some(parent) = call.last() {
                    let p = parent.0;
                    low[p] = low[p].min(low[v]);
                }
            }
        }
    }
    Some(blocks)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn triangular_chain_and_cycle() {
        // e0: x0;  e1: x0, x1, x2;  e2: x1, x2;  e3: x3, x2 -> blocks {x0}, {x1, x2}, {x3}.
        let adj = vec![vec![0], vec![0, 1, 2], vec![1, 2], vec![2, 3]];
        let b = block_triangular(4, &adj).unwrap();
        let vars: Vec<Vec<usize>> = b.iter().map(|b| b.variables.clone()).collect();
        assert_eq!(vars, vec![vec![0], vec![1, 2], vec![3]]);
        for blk in &b {
            for (e, v) in blk.equations.iter().zip(&blk.variables) {
                assert!(adj[*e].contains(v));
            }
        }
    }

    #[test]
    fn augmenting_paths_and_structural_singularity() {
        // e0: x0, x1; e1: x0 -> needs augmenting (e0 must take x1).
        let b = block_triangular(2, &[vec![0, 1], vec![0]]).unwrap();
        assert_eq!(b.len(), 2);
        assert_eq!(b[0].variables, vec![0]);
        // Two equations in one variable only: no perfect matching.
        assert!(block_triangular(2, &[vec![0], vec![0]]).is_none());
    }
}
