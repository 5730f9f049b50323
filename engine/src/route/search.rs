//! A* search (Hart, Nilsson and Raphael, IEEE Trans. SSC 4(2), 1968) over a stack of
//! grid planes joined by vias.
//!
//! The engine knows nothing about boards: a [`Costs`] implementation says what each step
//! costs or that it is blocked. It searches from many sources at once (the copper a net
//! already has) to any of a few targets (a pin), with the Manhattan distance as heuristic,
//! or the octile distance when 45-degree steps are allowed, plus the cheapest via when the
//! layer is wrong. Both are admissible and consistent as long as every step costs at least
//! its length and every via at least `via_lower_bound`.
//!
//! Bends are charged when the step's direction differs from the direction the node was
//! best reached by. Direction is not part of the search state, so with a bend cost the
//! result is near-shortest rather than shortest; with a zero bend cost it is exact.
//!
//! The buffers (costs, parents, the heap) are kept between searches and reset by a
//! generation counter, so a search touches only the nodes it visits.

use std::cmp::Ordering;
use std::collections::BinaryHeap;

/// Steps on a plane: four axis directions, then four diagonals.
pub(crate) const DIRS: [(i32, i32); 8] = [
    (1, 0),
    (0, 1),
    (-1, 0),
    (0, -1),
    (1, 1),
    (-1, 1),
    (-1, -1),
    (1, -1),
];
/// The direction of a node reached through a via, or a source.
const NO_DIR: u8 = u8::MAX;
const NO_PARENT: u32 = u32::MAX;

/// Sizes of the layered grid; node `n = (layer · height + y) · width + x`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) struct Dims {
    pub w: usize,
    pub h: usize,
    pub layers: usize,
}

impl Dims {
    pub fn plane(&self) -> usize {
        self.w * self.h
    }

    pub fn nodes(&self) -> usize {
        self.plane() * self.layers
    }

    #[inline]
    pub fn node(&self, x: usize, y: usize, layer: usize) -> u32 {
        ((layer * self.h + y) * self.w + x) as u32
    }

    #[inline]
    pub fn xyl(&self, n: u32) -> (usize, usize, usize) {
        let n = n as usize;
        let plane = self.plane();
        let (l, r) = (n / plane, n % plane);
        (r % self.w, r / self.w, l)
    }
}

/// A grid node's coordinates, handed to [`Costs`] so it need not divide to find them.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Node {
    pub x: usize,
    pub y: usize,
    pub layer: usize,
}

/// What moving through the grid costs. `None` means the move is not allowed.
pub(crate) trait Costs {
    /// A step on one layer from `from` to its neighbour `to` in direction `dir` (an index
    /// into [`DIRS`]); must cost at least the step's length (1 or √2), bends excluded.
    fn step(&self, from: Node, to: u32, dir: usize) -> Option<f64>;
    /// A change of layer at one grid point, from node `from` to node `to`.
    fn via(&self, from: u32, to: u32) -> Option<f64>;
}

/// Options of one search.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Params {
    /// Allow the four diagonal steps.
    pub diagonal: bool,
    /// Added to a step whose direction differs from the one its node was reached by.
    pub bend_cost: f64,
    /// The least any via costs (for the heuristic).
    pub via_lower_bound: f64,
}

#[derive(Clone, Copy, Debug)]
struct Open {
    f: f64,
    g: f64,
    node: u32,
}

impl PartialEq for Open {
    fn eq(&self, o: &Self) -> bool {
        self.cmp(o) == Ordering::Equal
    }
}

impl Eq for Open {}

impl PartialOrd for Open {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}

impl Ord for Open {
    /// A max-heap pops the smallest `f` first; among equal `f` the deepest (largest `g`),
    /// which heads straight for the target instead of widening the front.
    fn cmp(&self, o: &Self) -> Ordering {
        o.f.total_cmp(&self.f)
            .then(self.g.total_cmp(&o.g))
            .then(o.node.cmp(&self.node))
    }
}

/// Reusable A* state (see the module documentation).
#[derive(Debug, Default)]
pub(crate) struct Search {
    g: Vec<f64>,
    parent: Vec<u32>,
    dir: Vec<u8>,
    seen: Vec<u32>,
    target: Vec<u32>,
    generation: u32,
    heap: BinaryHeap<Open>,
    goals: Vec<(usize, usize, usize)>,
    /// Nodes expanded since the search was made (for profiling).
    pub expanded: u64,
}

impl Search {
    fn prepare(&mut self, nodes: usize) {
        if self.g.len() < nodes {
            self.g.resize(nodes, 0.0);
            self.parent.resize(nodes, NO_PARENT);
            self.dir.resize(nodes, NO_DIR);
            self.seen.resize(nodes, 0);
            self.target.resize(nodes, 0);
        }
        self.generation = self.generation.wrapping_add(1);
        if self.generation == 0 {
            self.seen.fill(0);
            self.target.fill(0);
            self.generation = 1;
        }
        self.heap.clear();
    }

    #[inline]
    fn heuristic(&self, dims: &Dims, p: &Params, n: u32) -> f64 {
        let (x, y, l) = dims.xyl(n);
        let mut best = f64::INFINITY;
        for &(tx, ty, tl) in &self.goals {
            let dx = x.abs_diff(tx) as f64;
            let dy = y.abs_diff(ty) as f64;
            let planar = if p.diagonal {
                dx + dy + (std::f64::consts::SQRT_2 - 2.0) * dx.min(dy)
            } else {
                dx + dy
            };
            let h = planar + if tl == l { 0.0 } else { p.via_lower_bound };
            best = best.min(h);
        }
        best
    }

    #[inline]
    fn relax(&mut self, dims: &Dims, p: &Params, to: u32, g: f64, from: u32, dir: u8) {
        let t = to as usize;
        if self.seen[t] == self.generation && g >= self.g[t] - 1e-12 {
            return;
        }
        self.seen[t] = self.generation;
        self.g[t] = g;
        self.parent[t] = from;
        self.dir[t] = dir;
        let f = g + self.heuristic(dims, p, to);
        self.heap.push(Open { f, g, node: to });
    }

    /// The cheapest path from any source to any target, with its cost, or `None` when no
    /// target can be reached. The path runs from a source to a target.
    pub fn run(
        &mut self,
        dims: &Dims,
        sources: &[u32],
        targets: &[u32],
        p: &Params,
        costs: &impl Costs,
    ) -> Option<(f64, Vec<u32>)> {
        self.prepare(dims.nodes());
        self.goals.clear();
        for &t in targets {
            self.target[t as usize] = self.generation;
            self.goals.push(dims.xyl(t));
        }
        if self.goals.is_empty() {
            return None;
        }
        for &s in sources {
            self.relax(dims, p, s, 0.0, NO_PARENT, NO_DIR);
        }
        let ndirs = if p.diagonal { 8 } else { 4 };

        while let Some(Open { g, node, .. }) = self.heap.pop() {
            let n = node as usize;
            if g > self.g[n] {
                continue; // a stale entry: the node was reached more cheaply since
            }
            if self.target[n] == self.generation {
                return Some((g, self.path_to(node)));
            }
            self.expanded += 1;
            let (x, y, l) = dims.xyl(node);
            let here = Node { x, y, layer: l };
            let came = self.dir[n];
            for (d, &(dx, dy)) in DIRS.iter().enumerate().take(ndirs) {
                let nx = x as i64 + dx as i64;
                let ny = y as i64 + dy as i64;
                if nx < 0 || ny < 0 || nx >= dims.w as i64 || ny >= dims.h as i64 {
                    continue;
                }
                let to = dims.node(nx as usize, ny as usize, l);
                let Some(c) = costs.step(here, to, d) else {
                    continue;
                };
                let bend = if came != NO_DIR && came as usize != d {
                    p.bend_cost
                } else {
                    0.0
                };
                self.relax(dims, p, to, g + c + bend, node, d as u8);
            }
            for l2 in 0..dims.layers {
                if l2 == l {
                    continue;
                }
                let to = dims.node(x, y, l2);
                if let Some(c) = costs.via(node, to) {
                    self.relax(dims, p, to, g + c, node, NO_DIR);
                }
            }
        }
        None
    }

    fn path_to(&self, mut n: u32) -> Vec<u32> {
        let mut path = vec![n];
        while self.parent[n as usize] != NO_PARENT {
            n = self.parent[n as usize];
            path.push(n);
        }
        path.reverse();
        path
    }
}

/// A cell of a [`Maze`]: `(x, y, layer)`.
pub type Cell = (usize, usize, usize);

/// A plain grid maze for using and testing the router's search on its own: `layers`
/// planes of `width` x `height` cells, some blocked. A step costs 1 (√2 diagonally), a
/// change of layer at one cell `via_cost`. Diagonal steps may not cut a blocked corner.
#[derive(Clone, Debug, PartialEq)]
pub struct Maze {
    /// Cells across.
    pub width: usize,
    /// Cells up.
    pub height: usize,
    /// Number of planes.
    pub layers: usize,
    /// One flag per cell, indexed by [`Maze::index`].
    pub blocked: Vec<bool>,
    /// Cost of changing plane at one cell.
    pub via_cost: f64,
    /// Allow the four diagonal steps.
    pub diagonal: bool,
}

impl Maze {
    /// An open maze with vias costing 1.
    pub fn new(width: usize, height: usize, layers: usize) -> Maze {
        Maze {
            width,
            height,
            layers,
            blocked: vec![false; width * height * layers],
            via_cost: 1.0,
            diagonal: false,
        }
    }

    /// Where a cell's flag is in [`Maze::blocked`].
    pub fn index(&self, (x, y, l): Cell) -> usize {
        (l * self.height + y) * self.width + x
    }

    /// The cheapest path from any of `from` to any of `to` and its cost, found by A*.
    pub fn shortest_path(&self, from: &[Cell], to: &[Cell]) -> Option<(f64, Vec<Cell>)> {
        let dims = Dims {
            w: self.width,
            h: self.height,
            layers: self.layers,
        };
        let free = |c: &Cell| !self.blocked[self.index(*c)];
        let sources: Vec<u32> = from
            .iter()
            .filter(|c| free(c))
            .map(|&(x, y, l)| dims.node(x, y, l))
            .collect();
        let targets: Vec<u32> = to
            .iter()
            .filter(|c| free(c))
            .map(|&(x, y, l)| dims.node(x, y, l))
            .collect();
        let params = Params {
            diagonal: self.diagonal,
            bend_cost: 0.0,
            via_lower_bound: self.via_cost,
        };
        let mut search = Search::default();
        let costs = MazeCosts { maze: self, dims };
        let (cost, path) = search.run(&dims, &sources, &targets, &params, &costs)?;
        Some((cost, path.into_iter().map(|n| dims.xyl(n)).collect()))
    }
}

struct MazeCosts<'a> {
    maze: &'a Maze,
    dims: Dims,
}

impl Costs for MazeCosts<'_> {
    fn step(&self, from: Node, to: u32, dir: usize) -> Option<f64> {
        if self.maze.blocked[to as usize] {
            return None;
        }
        if dir < 4 {
            return Some(1.0);
        }
        // No corner cutting: both cells beside the diagonal must be open.
        let Node { x, y, layer: l, .. } = from;
        let (tx, ty, _) = self.dims.xyl(to);
        let a = self.dims.node(tx, y, l) as usize;
        let b = self.dims.node(x, ty, l) as usize;
        if self.maze.blocked[a] || self.maze.blocked[b] {
            return None;
        }
        Some(std::f64::consts::SQRT_2)
    }

    fn via(&self, _from: u32, to: u32) -> Option<f64> {
        (!self.maze.blocked[to as usize]).then_some(self.maze.via_cost)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn straight_line_and_wall() {
        let mut m = Maze::new(10, 5, 1);
        let (c, p) = m.shortest_path(&[(0, 2, 0)], &[(9, 2, 0)]).unwrap();
        assert_eq!(c, 9.0);
        assert_eq!(p.len(), 10);
        // A wall with a gap at the top row forces a detour of 2 * 2 cells.
        for y in 0..4 {
            let i = m.index((5, y, 0));
            m.blocked[i] = true;
        }
        let (c, _) = m.shortest_path(&[(0, 2, 0)], &[(9, 2, 0)]).unwrap();
        assert_eq!(c, 13.0);
    }

    #[test]
    fn via_through_a_full_wall() {
        let mut m = Maze::new(6, 3, 2);
        m.via_cost = 3.0;
        for y in 0..3 {
            let i = m.index((3, y, 0));
            m.blocked[i] = true;
        }
        let (c, p) = m.shortest_path(&[(0, 1, 0)], &[(5, 1, 0)]).unwrap();
        assert_eq!(c, 5.0 + 2.0 * 3.0);
        assert!(p.iter().any(|c| c.2 == 1));
    }
}
