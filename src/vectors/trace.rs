//! Pixel-edge polygons traced straight from row runs, one row at a time.
//!
//! Input: the rows of a grid top to bottom, each as runs `start..end` of cells carrying a
//! region id (a patch id, or 1 for M). Output: for each id, its polygons in pixel-corner
//! coordinates (column, row), with exterior rings counter-clockwise and holes clockwise when
//! drawn north up (x = column, y = -row), emitted as soon as the region's last row is known.
//!
//! How: every boundary edge of a region is a cell edge between a cell of the region and a cell
//! that is not. Between rows r - 1 and r the horizontal edges of a region are the columns
//! where exactly one of the two rows holds it (the difference of the two rows' runs); its
//! vertical edges are the two ends of each run. Edges are directed with the region on their
//! left, so at every cell corner as many edges leave as arrive, and all of them are known once
//! both rows around the corner are. Edges are linked there, so memory holds the edges of the
//! regions still open, never a grid.
//!
//! Pinch corners: where two cells of a region meet only at a corner (the other two cells
//! outside it), two edges arrive and two leave. Taking the left turn separates the two cells;
//! afterwards, a ring that passes such a corner twice touches itself, which OGC simple-feature
//! validity forbids, so its two passes are swapped there, which cuts it into two rings that each
//! pass the corner once (an outer ring and a hole touching it at one point, or two holes).
//! Every ring is then simple, rings meet at most at isolated corners, and each hole belongs to
//! the exterior ring of the face just above its topmost edge: the face is found through the
//! left edge of the run above that edge (the ring of that left edge is the exterior, or a hole
//! of the same polygon whose exterior is already known, because its top lies higher).

use crate::{Error, Result};

/// A run of region cells `start..end` in one row with its region id (1-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct IdRun {
    pub start: u32,
    pub end: u32,
    pub id: u32,
}

/// One polygon in pixel-corner coordinates (column, row); rings closed (first == last).
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct PixelPolygon {
    pub exterior: Vec<(u32, u32)>,
    pub holes: Vec<Vec<(u32, u32)>>,
}

const NONE: u32 = u32::MAX;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Dir {
    East,
    North,
    West,
    South,
}

impl Dir {
    /// The direction after a left turn, north up.
    fn left(self) -> Dir {
        match self {
            Dir::East => Dir::North,
            Dir::North => Dir::West,
            Dir::West => Dir::South,
            Dir::South => Dir::East,
        }
    }
}

#[derive(Debug, Clone, Copy)]
struct Edge {
    from: (u32, u32),
    dir: Dir,
    next: u32,
    /// For an east-going edge (region above): the left edge of the region's run above it.
    above_left: u32,
}

#[derive(Debug, Default)]
struct Open {
    edges: Vec<Edge>,
    /// Pinch corners: the two edges arriving there.
    pinches: Vec<(u32, u32)>,
}

impl Open {
    fn push(&mut self, from: (u32, u32), dir: Dir, above_left: u32) -> u32 {
        self.edges.push(Edge {
            from,
            dir,
            next: NONE,
            above_left,
        });
        (self.edges.len() - 1) as u32
    }
}

/// A run of the previous row with the indices of its two vertical edges.
#[derive(Debug, Clone, Copy)]
struct TracedRun {
    run: IdRun,
    left: u32,
    right: u32,
}

/// One edge end at the row boundary being linked.
#[derive(Debug, Clone, Copy)]
struct End {
    id: u32,
    x: u32,
    arrives: bool,
    dir: Dir,
    edge: u32,
}

/// Streaming tracer: push rows in order, collect finished regions.
pub(crate) struct Tracer {
    open: std::collections::HashMap<u32, Open>,
    prev: Vec<TracedRun>,
    cur: Vec<IdRun>,
    ends: Vec<End>,
    next_row: u32,
}

impl Tracer {
    pub(crate) fn new() -> Tracer {
        Tracer {
            open: std::collections::HashMap::new(),
            prev: Vec::new(),
            cur: Vec::new(),
            ends: Vec::new(),
            next_row: 0,
        }
    }

    /// Push row `row` (rows in increasing order; skipped rows are empty). `runs` sorted by
    /// start, not overlapping; neighbouring runs of one id are joined.
    pub(crate) fn push_row(&mut self, row: u32, runs: &[IdRun]) -> Result<()> {
        if row < self.next_row {
            return Err(internal(format!(
                "row {row} pushed after row {}",
                self.next_row
            )));
        }
        if row > self.next_row {
            self.boundary(self.next_row, &[])?; // close what the skipped rows end
            self.next_row = row;
        }
        self.boundary(row, runs)?;
        self.next_row = row + 1;
        Ok(())
    }

    /// The polygons of region `id`, once every row it touches and the row below have been
    /// pushed (after `push_row(r)` the regions whose last row is `r - 1` or earlier).
    pub(crate) fn take(&mut self, id: u32) -> Result<Vec<PixelPolygon>> {
        let open = self.open.remove(&id).unwrap_or_default();
        assemble(open).map_err(|e| internal(format!("region {id}: {e}")))
    }

    /// Close the last row (pushes an empty row below it); every region can then be taken.
    pub(crate) fn finish(&mut self) -> Result<Vec<u32>> {
        self.boundary(self.next_row, &[])?;
        self.next_row += 1;
        let mut ids: Vec<u32> = self.open.keys().copied().collect();
        ids.sort_unstable();
        Ok(ids)
    }

    /// Row `r` (runs) under the previous row: edges on the boundary y = r and of row r, linked.
    fn boundary(&mut self, r: u32, runs: &[IdRun]) -> Result<()> {
        self.cur.clear();
        for &run in runs {
            match self.cur.last_mut() {
                Some(last) if last.id == run.id && last.end == run.start => last.end = run.end,
                Some(last) if last.end > run.start => {
                    return Err(internal(format!("row {r}: runs overlap or are unsorted")))
                }
                _ => {
                    if run.start < run.end {
                        self.cur.push(run)
                    }
                }
            }
        }
        self.ends.clear();
        // Vertical edges of the previous row end here.
        for t in &self.prev {
            let (id, s, e) = (t.run.id, t.run.start, t.run.end);
            self.ends.push(end(id, s, true, Dir::South, t.left));
            self.ends.push(end(id, e, false, Dir::North, t.right));
        }
        // Vertical edges of this row start here.
        let mut traced = Vec::with_capacity(self.cur.len());
        for &run in &self.cur {
            let o = self.open.entry(run.id).or_default();
            let left = o.push((run.start, r), Dir::South, NONE);
            let right = o.push((run.end, r + 1), Dir::North, NONE);
            self.ends
                .push(end(run.id, run.start, false, Dir::South, left));
            self.ends
                .push(end(run.id, run.end, true, Dir::North, right));
            traced.push(TracedRun { run, left, right });
        }
        self.horizontal(r);
        self.link(r)?;
        self.prev = traced;
        Ok(())
    }

    /// Horizontal edges on y = r: where the id above differs from the id below.
    fn horizontal(&mut self, r: u32) {
        let (prev, cur) = (&self.prev, &self.cur);
        let (mut i, mut j) = (0usize, 0usize);
        let mut x = 0u32;
        // Pending maximal edges: (id, start, end, above_left) for east (region above) and
        // west (region below) edges.
        let mut east: Option<(u32, u32, u32, u32)> = None;
        let mut west: Option<(u32, u32, u32)> = None;
        let flush_e = |e: &mut Option<(u32, u32, u32, u32)>, open: &mut Tracer| {
            if let Some((id, a, b, al)) = e.take() {
                let o = open.open.get_mut(&id).expect("open region");
                let k = o.push((a, r), Dir::East, al);
                open.ends.push(end(id, a, false, Dir::East, k));
                open.ends.push(end(id, b, true, Dir::East, k));
            }
        };
        let mut segs: Vec<(u32, u32, u32, u32, u32)> = Vec::new(); // (a, b, above, below, above_left)
        loop {
            while i < prev.len() && prev[i].run.end <= x {
                i += 1;
            }
            while j < cur.len() && cur[j].end <= x {
                j += 1;
            }
            if i >= prev.len() && j >= cur.len() {
                break;
            }
            let pa = prev.get(i).map(|t| t.run);
            let cb = cur.get(j).copied();
            let in_a = pa.filter(|p| p.start <= x);
            let in_b = cb.filter(|c| c.start <= x);
            if in_a.is_none() && in_b.is_none() {
                x = pa
                    .map_or(u32::MAX, |p| p.start)
                    .min(cb.map_or(u32::MAX, |c| c.start));
                continue;
            }
            let mut to = u32::MAX;
            for (run, inside) in [(pa, in_a.is_some()), (cb, in_b.is_some())] {
                if let Some(run) = run {
                    to = to.min(if inside { run.end } else { run.start });
                }
            }
            let above = in_a.map_or(0, |p| p.id);
            let below = in_b.map_or(0, |c| c.id);
            if above != below {
                let al = if above != 0 { prev[i].left } else { NONE };
                segs.push((x, to, above, below, al));
            }
            x = to;
        }
        for (a, b, above, below, al) in segs {
            if above != 0 {
                match &mut east {
                    Some(e) if e.0 == above && e.2 == a => e.2 = b,
                    _ => {
                        flush_e(&mut east, self);
                        east = Some((above, a, b, al));
                    }
                }
            }
            if below != 0 {
                match &mut west {
                    Some(w) if w.0 == below && w.2 == a => w.2 = b,
                    _ => {
                        if let Some((id, a0, b0)) = west.take() {
                            self.push_west(id, a0, b0, r);
                        }
                        west = Some((below, a, b));
                    }
                }
            }
        }
        flush_e(&mut east, self);
        if let Some((id, a0, b0)) = west.take() {
            self.push_west(id, a0, b0, r);
        }
    }

    fn push_west(&mut self, id: u32, a: u32, b: u32, r: u32) {
        let o = self.open.get_mut(&id).expect("open region");
        let k = o.push((b, r), Dir::West, NONE);
        self.ends.push(end(id, b, false, Dir::West, k));
        self.ends.push(end(id, a, true, Dir::West, k));
    }

    /// Link every edge arriving on y = r to the edge leaving the same corner.
    fn link(&mut self, r: u32) -> Result<()> {
        self.ends.sort_unstable_by_key(|e| (e.id, e.x, !e.arrives));
        let mut k = 0;
        while k < self.ends.len() {
            let mut n = k + 1;
            while n < self.ends.len()
                && self.ends[n].id == self.ends[k].id
                && self.ends[n].x == self.ends[k].x
            {
                n += 1;
            }
            let g = &self.ends[k..n];
            let o = self.open.get_mut(&g[0].id).expect("open region");
            match g.len() {
                2 if g[0].arrives && !g[1].arrives => o.edges[g[0].edge as usize].next = g[1].edge,
                4 if g[0].arrives && g[1].arrives && !g[2].arrives && !g[3].arrives => {
                    for a in &g[..2] {
                        let out = g[2..].iter().find(|b| b.dir == a.dir.left());
                        let Some(out) = out else {
                            return Err(internal(format!(
                                "corner ({}, {r}) has no left turn",
                                a.x
                            )));
                        };
                        o.edges[a.edge as usize].next = out.edge;
                    }
                    o.pinches.push((g[0].edge, g[1].edge));
                }
                _ => {
                    return Err(internal(format!(
                        "corner ({}, {r}) of region {} has {} edge ends",
                        g[0].x,
                        g[0].id,
                        g.len()
                    )))
                }
            }
            k = n;
        }
        Ok(())
    }
}

fn end(id: u32, x: u32, arrives: bool, dir: Dir, edge: u32) -> End {
    End {
        id,
        x,
        arrives,
        dir,
        edge,
    }
}

fn internal(what: String) -> Error {
    Error::Processing {
        what: "tracing polygons".into(),
        reason: format!("{what}; this is a bug in areal, please report it with the input"),
    }
}

/// Rings and polygons of one finished region.
fn assemble(mut o: Open) -> std::result::Result<Vec<PixelPolygon>, String> {
    let n = o.edges.len();
    if o.edges.iter().any(|e| e.next == NONE) {
        return Err("an edge was left unlinked".into());
    }
    let mut ring = vec![NONE; n];
    let mut n_rings = 0u32;
    for s in 0..n {
        if ring[s] != NONE {
            continue;
        }
        let mut e = s;
        while ring[e] == NONE {
            ring[e] = n_rings;
            e = o.edges[e].next as usize;
        }
        n_rings += 1;
    }
    // A ring through a pinch corner twice: swap its two passes there, relabel the shorter part.
    for &(a1, a2) in &o.pinches {
        let (a1, a2) = (a1 as usize, a2 as usize);
        if ring[a1] != ring[a2] {
            continue;
        }
        let (b1, b2) = (o.edges[a1].next, o.edges[a2].next);
        o.edges[a1].next = b2;
        o.edges[a2].next = b1;
        let (mut p, mut q) = (b2 as usize, b1 as usize);
        let shorter = loop {
            if p == a1 {
                break a1;
            }
            if q == a2 {
                break a2;
            }
            p = o.edges[p].next as usize;
            q = o.edges[q].next as usize;
        };
        let mut e = shorter;
        loop {
            ring[e] = n_rings;
            e = o.edges[e].next as usize;
            if e == shorter {
                break;
            }
        }
        n_rings += 1;
    }
    // Per ring: first edge, doubled signed area (north up), topmost east edge.
    let nr = n_rings as usize;
    let mut first = vec![NONE; nr];
    let mut area2 = vec![0i64; nr];
    let mut top: Vec<(u32, u32)> = vec![(u32::MAX, NONE); nr];
    for (i, e) in o.edges.iter().enumerate() {
        let k = ring[i] as usize;
        if first[k] == NONE {
            first[k] = i as u32;
        }
        let to = o.edges[e.next as usize].from;
        // Shoelace in (x, -y): x0 * (-y1) - x1 * (-y0).
        area2[k] += to.0 as i64 * e.from.1 as i64 - e.from.0 as i64 * to.1 as i64;
        if e.dir == Dir::East && e.from.1 < top[k].0 {
            top[k] = (e.from.1, i as u32);
        }
    }
    let mut shell_of = vec![NONE; nr];
    for k in 0..nr {
        if area2[k] > 0 {
            shell_of[k] = k as u32;
        }
    }
    let mut holes: Vec<usize> = (0..nr).filter(|&k| area2[k] < 0).collect();
    holes.sort_unstable_by_key(|&k| top[k].0);
    for &h in &holes {
        let edge = top[h].1;
        if edge == NONE {
            return Err("a hole has no top edge".into());
        }
        let al = o.edges[edge as usize].above_left;
        if al == NONE {
            return Err("a hole's top edge has no run above".into());
        }
        let s = shell_of[ring[al as usize] as usize];
        if s == NONE || area2[s as usize] <= 0 {
            return Err("a hole lies in no exterior ring".into());
        }
        shell_of[h] = s;
    }
    if area2.contains(&0) {
        return Err("a ring has no area".into());
    }
    let mut out: Vec<PixelPolygon> = Vec::new();
    let mut slot = vec![NONE; nr];
    let mut shells: Vec<usize> = (0..nr).filter(|&k| area2[k] > 0).collect();
    shells.sort_unstable_by_key(|&k| first[k]);
    for &s in &shells {
        slot[s] = out.len() as u32;
        out.push(PixelPolygon {
            exterior: vertices(&o.edges, first[s] as usize),
            holes: Vec::new(),
        });
    }
    holes.sort_unstable_by_key(|&k| first[k]);
    for &h in &holes {
        let p = slot[shell_of[h] as usize] as usize;
        out[p].holes.push(vertices(&o.edges, first[h] as usize));
    }
    Ok(out)
}

/// The corners of the ring through edge `start` (direction changes only), closed.
fn vertices(edges: &[Edge], start: usize) -> Vec<(u32, u32)> {
    // Start at an edge whose predecessor turns, so no vertex sits inside a straight run.
    let mut cycle = vec![start];
    let mut e = edges[start].next as usize;
    while e != start {
        cycle.push(e);
        e = edges[e].next as usize;
    }
    let m = cycle.len();
    let s = (0..m)
        .find(|&i| edges[cycle[i]].dir != edges[cycle[(i + m - 1) % m]].dir)
        .unwrap_or(0);
    let mut out = Vec::new();
    for i in 0..m {
        let e = cycle[(s + i) % m];
        let p = cycle[(s + i + m - 1) % m];
        if i == 0 || edges[e].dir != edges[p].dir {
            out.push(edges[e].from);
        }
    }
    out.push(out[0]);
    out
}
