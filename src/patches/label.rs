//! Union-find over provisional component labels, with slot reuse.
//!
//! A slot holds one provisional label: its parent, a rank, and (on a root) the component's
//! accumulator. The labeller resolves every run of the current row to its root at the end of
//! the row, so afterwards the only slots anyone refers to are the roots of the components that
//! reach the current row; every other slot is released and reused. The number of slots in use
//! is therefore bounded by the runs of two consecutive rows, never by the rows seen so far.

use super::measure::{Acc, Columns};

/// One provisional label.
#[derive(Debug, Clone)]
struct Node {
    parent: u32,
    rank: u8,
    /// Last row in which a run of the current row resolved to this root.
    live_row: usize,
    acc: Acc,
}

/// The slots and their free list.
#[derive(Debug, Default)]
pub(crate) struct Forest {
    nodes: Vec<Node>,
    free: Vec<u32>,
}

impl Forest {
    /// A new singleton label holding `acc`.
    pub(crate) fn alloc(&mut self, acc: Acc) -> u32 {
        let node = |id| Node {
            parent: id,
            rank: 0,
            live_row: usize::MAX,
            acc,
        };
        match self.free.pop() {
            Some(id) => {
                self.nodes[id as usize] = node(id);
                id
            }
            None => {
                let id = u32::try_from(self.nodes.len())
                    .expect("more than 4 billion live components in two rows");
                self.nodes.push(node(id));
                id
            }
        }
    }

    /// Root of `x` (path halving).
    pub(crate) fn find(&mut self, mut x: u32) -> u32 {
        loop {
            let p = self.nodes[x as usize].parent;
            if p == x {
                return x;
            }
            let gp = self.nodes[p as usize].parent;
            self.nodes[x as usize].parent = gp;
            x = gp;
        }
    }

    /// Join the components of `a` and `b`; returns the new root. The absorbed root's
    /// accumulator is merged into the survivor's.
    pub(crate) fn union(&mut self, a: u32, b: u32, cols: &Columns) -> u32 {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra == rb {
            return ra;
        }
        let (keep, gone) = if self.nodes[ra as usize].rank >= self.nodes[rb as usize].rank {
            (ra, rb)
        } else {
            (rb, ra)
        };
        let gone_node = &mut self.nodes[gone as usize];
        gone_node.parent = keep;
        let (gone_acc, gone_rank) = (gone_node.acc, gone_node.rank);
        let k = &mut self.nodes[keep as usize];
        k.acc.merge(&gone_acc, cols);
        if k.rank == gone_rank {
            k.rank += 1;
        }
        keep
    }

    /// Add one run's statistics to the component whose root is `root`.
    pub(crate) fn add(&mut self, root: u32, acc: &Acc, cols: &Columns) {
        self.nodes[root as usize].acc.merge(acc, cols);
    }

    /// Mark root `x` as reaching `row`.
    pub(crate) fn mark_live(&mut self, x: u32, row: usize) {
        self.nodes[x as usize].live_row = row;
    }

    /// Whether `x` is a root.
    pub(crate) fn is_root(&self, x: u32) -> bool {
        self.nodes[x as usize].parent == x
    }

    /// Whether root `x` was marked as reaching `row`.
    pub(crate) fn is_live(&self, x: u32, row: usize) -> bool {
        self.nodes[x as usize].live_row == row
    }

    /// A surviving root whose children have all been released: a singleton again.
    pub(crate) fn reset_rank(&mut self, x: u32) {
        self.nodes[x as usize].rank = 0;
    }

    /// Release slot `x` for reuse and return its accumulator. Nothing may refer to `x` after.
    pub(crate) fn release(&mut self, x: u32) -> Acc {
        self.free.push(x);
        self.nodes[x as usize].acc
    }

    /// Slots ever allocated (in use or free): the labeller's working memory, in slots.
    pub(crate) fn capacity(&self) -> usize {
        self.nodes.len()
    }

    /// Slots in use.
    pub(crate) fn in_use(&self) -> usize {
        self.nodes.len() - self.free.len()
    }
}
