//! Union-find over provisional component labels, with slot reuse.
//!
//! A slot holds one provisional label: its parent, a rank, and (on a root) the component's
//! accumulator. The labeller resolves every run of the current row to its root at the end of
//! the row, so afterwards the only slots anyone refers to are the roots of the components that
//! reach the current row; every other slot is released and reused. The number of slots in use
//! is therefore bounded by the runs of two consecutive rows, never by the rows seen so far.
//!
//! Serials: every new component also gets a serial number, and a union links the absorbed
//! root's serial to the survivor's in an append-only parent array (4 bytes per component ever
//! created). A run emitted with its root's serial can so be resolved to its final patch at the
//! end ([`Forest::serial_roots`]), although slots are reused and ids are given only then.

use super::measure::{Acc, Columns};

/// One provisional label.
#[derive(Debug, Clone)]
struct Node {
    parent: u32,
    rank: u8,
    /// Last row in which a run of the current row resolved to this root.
    live_row: usize,
    /// The component's serial (a root of the serial forest while this node is a root).
    serial: u32,
    acc: Acc,
}

/// The slots and their free list.
#[derive(Debug, Default)]
pub(crate) struct Forest {
    nodes: Vec<Node>,
    free: Vec<u32>,
    /// Parent of each serial; a serial absorbed by a union points to the survivor's.
    serial_parent: Vec<u32>,
}

impl Forest {
    /// A new singleton label holding `acc`.
    pub(crate) fn alloc(&mut self, acc: Acc) -> u32 {
        let serial = u32::try_from(self.serial_parent.len())
            .expect("more than 4 billion components in one raster");
        self.serial_parent.push(serial);
        let node = |id| Node {
            parent: id,
            rank: 0,
            live_row: usize::MAX,
            serial,
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
        let (gone_acc, gone_rank, gone_serial) = (gone_node.acc, gone_node.rank, gone_node.serial);
        let k = &mut self.nodes[keep as usize];
        self.serial_parent[gone_serial as usize] = k.serial;
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

    /// Release slot `x` for reuse and return its accumulator and serial. Nothing may refer to
    /// `x` after.
    pub(crate) fn release(&mut self, x: u32) -> (Acc, u32) {
        self.free.push(x);
        let n = &self.nodes[x as usize];
        (n.acc, n.serial)
    }

    /// The serial of root `x`.
    pub(crate) fn serial(&self, x: u32) -> u32 {
        self.nodes[x as usize].serial
    }

    /// Serials created so far.
    pub(crate) fn serials(&self) -> usize {
        self.serial_parent.len()
    }

    /// Every serial mapped to its final root serial (the serial array is consumed).
    pub(crate) fn serial_roots(&mut self) -> Vec<u32> {
        let mut p = std::mem::take(&mut self.serial_parent);
        for i in 0..p.len() {
            // Path halving to the root, then point `i` straight at it.
            let mut x = i as u32;
            while p[x as usize] != x {
                let gp = p[p[x as usize] as usize];
                p[x as usize] = gp;
                x = gp;
            }
            p[i] = x;
        }
        p
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
