//! The design-rule checker: measures the copper and the parts of a [`Design`] with exact
//! geometry ([`super::geometry`]) and lists every rule broken. It knows nothing of the
//! router or its grid, so it can check the router's output as an independent witness.
//!
//! What it checks:
//! - clearance between copper of different nets (pads, track segments, vias, and
//!   unplated holes, which copper must also clear), using the larger of the two nets'
//!   clearances; copper that touches is a short;
//! - copper to the board edge (`edge_clearance`; the outline may be any simple polygon);
//! - copper inside copper keep-outs;
//! - tracks narrower than their net's width;
//! - pins left unconnected, with connectivity found from the copper itself: pads, track
//!   segments and vias of one net that touch on a common layer are joined (SMD pads are
//!   on their part's side only; through-hole pads and vias on both layers);
//! - courtyards overlapping each other, leaving the board or entering part keep-outs, and
//!   parts not yet placed;
//! - net classes narrower than IPC-2221 needs for their current, or with less clearance
//!   than IPC-2221 Table 6-1 (column B2, outer layers uncoated) gives for their voltage.
//!
//! Pads of one part are not checked against each other: their spacing belongs to the
//! footprint. Hole-to-hole spacing and drill sizes are not checked.
//!
//! **Invariant:** the checker never fails and does no I/O; it returns a list, which is
//! empty for a clean board. Items are found through a bucket grid, so a board of a few
//! hundred parts checks in milliseconds.

use std::collections::HashMap;

use serde::{Deserialize, Serialize};

use super::geometry::{Buckets, LayerSet, PlacedPad, Prim, edges, placed_pad};
use super::width::{
    BOARD_SPACING, DEFAULT_TEMP_RISE_C, LayerPosition, SAFETY_NOTE, clearance_for_voltage_mm,
    required_width_mm,
};
use crate::model::{Design, Layer, PartId, Point, Rect};

/// Distances within this many mm of a limit pass (floating-point noise, not copper).
pub const TOLERANCE_MM: f64 = 1e-6;

/// Which rule a [`Violation`] breaks.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum ViolationKind {
    /// Copper of two nets touches or overlaps.
    Short,
    /// Copper of two nets is closer than their clearance.
    Clearance,
    /// Copper closer to the board edge than the edge clearance, or outside the board.
    EdgeClearance,
    /// Copper inside a copper keep-out.
    CopperKeepout,
    /// A track narrower than its net's width.
    TrackWidth,
    /// Pins of a net not joined by copper.
    Unconnected,
    /// Two parts' courtyards overlap.
    CourtyardOverlap,
    /// A courtyard reaches outside the board.
    CourtyardOutsideBoard,
    /// A courtyard enters a part keep-out.
    PartKeepout,
    /// A part has no position yet.
    Unplaced,
    /// A net class's width is below what IPC-2221 needs for its current.
    ClassWidthForCurrent,
    /// A net class's clearance is below IPC-2221 Table 6-1 for its voltage.
    ClassClearanceForVoltage,
}

/// One broken rule, with what and where, ready to show or to write as JSON.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Violation {
    /// The rule broken.
    pub kind: ViolationKind,
    /// A sentence for the user, with the measured and the required figures.
    pub message: String,
    /// Where on the board, in mm; `None` for rules about the board as a whole (net
    /// classes).
    pub at: Option<Point>,
    /// References of the parts involved.
    pub parts: Vec<String>,
    /// Names of the nets involved.
    pub nets: Vec<String>,
}

/// What an item of copper is, for messages and for grouping segments of one track.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
enum Owner {
    Pad { part: u32, pad: u32 },
    Hole { part: u32, pad: u32 },
    Track(u32),
    Via(u32),
}

#[derive(Clone, Copy, Debug)]
struct Item {
    prim: Prim,
    layers: LayerSet,
    net: Option<u32>,
    owner: Owner,
}

/// Checks every rule (see the module documentation); an empty list means a clean board.
pub fn check(design: &Design) -> Vec<Violation> {
    let mut c = Checker::new(design);
    c.copper_pairs();
    c.edge_clearance();
    c.copper_keepouts();
    c.track_widths();
    c.connectivity();
    c.courtyards();
    c.net_classes();
    let mut out = c.finish();
    out.sort_by_key(|v| v.kind);
    out
}

/// What a violation is about: its kind, the copper involved and, for keep-outs, which one.
type Key = (ViolationKind, Owner, Option<Owner>, usize);

struct Checker<'a> {
    design: &'a Design,
    items: Vec<Item>,
    /// Item index of each pin's pad, for connectivity.
    pad_item: HashMap<(u32, u32), u32>,
    parent: Vec<u32>,
    found: Vec<(Violation, f64)>,
    /// Keeps one violation per key (the worst), not one per track segment.
    seen: HashMap<Key, usize>,
}

impl<'a> Checker<'a> {
    fn new(design: &'a Design) -> Self {
        let board = &design.board;
        let mut net_of_pad: HashMap<(u32, u32), u32> = HashMap::new();
        for (n, pins) in design.net_pins.iter().enumerate() {
            for pin in pins {
                net_of_pad.insert((pin.part.0, pin.pad), n as u32);
            }
        }
        let net_index: HashMap<&str, u32> = board
            .nets
            .iter()
            .enumerate()
            .map(|(i, n)| (n.name.as_str(), i as u32))
            .collect();
        let mut items = Vec::new();
        let mut pad_item = HashMap::new();
        for (pi, fp) in design.footprints.iter().enumerate() {
            for k in 0..fp.pads.len() {
                let Some(PlacedPad { prim, layers, .. }) = placed_pad(design, PartId(pi as u32), k)
                else {
                    continue;
                };
                let key = (pi as u32, k as u32);
                if layers == LayerSet::NONE {
                    items.push(Item {
                        prim,
                        layers: LayerSet::BOTH,
                        net: None,
                        owner: Owner::Hole {
                            part: key.0,
                            pad: key.1,
                        },
                    });
                    continue;
                }
                pad_item.insert(key, items.len() as u32);
                items.push(Item {
                    prim,
                    layers,
                    net: net_of_pad.get(&key).copied(),
                    owner: Owner::Pad {
                        part: key.0,
                        pad: key.1,
                    },
                });
            }
        }
        for (ti, t) in board.copper.tracks.iter().enumerate() {
            let net = net_index.get(t.net.as_str()).copied();
            for w in t.points.windows(2) {
                items.push(Item {
                    prim: Prim::track(w[0], w[1], t.width),
                    layers: LayerSet::of(t.layer),
                    net,
                    owner: Owner::Track(ti as u32),
                });
            }
        }
        for (vi, v) in board.copper.vias.iter().enumerate() {
            items.push(Item {
                prim: Prim::disc(v.at, v.diameter / 2.0),
                layers: LayerSet::BOTH,
                net: net_index.get(v.net.as_str()).copied(),
                owner: Owner::Via(vi as u32),
            });
        }
        let parent = (0..items.len() as u32).collect();
        Checker {
            design,
            items,
            pad_item,
            parent,
            found: Vec::new(),
            seen: HashMap::new(),
        }
    }

    fn finish(self) -> Vec<Violation> {
        self.found.into_iter().map(|(v, _)| v).collect()
    }

    fn clearance_of(&self, net: Option<u32>) -> f64 {
        net.and_then(|n| self.design.net_class(crate::model::NetId(n)))
            .map_or(self.design.board.rules.clearance, |c| c.clearance)
    }

    fn width_of(&self, net: Option<u32>) -> f64 {
        net.and_then(|n| self.design.net_class(crate::model::NetId(n)))
            .map_or(self.design.board.rules.track_width, |c| c.track_width)
    }

    fn net_name(&self, n: u32) -> &str {
        &self.design.board.nets[n as usize].name
    }

    fn pin_name(&self, part: u32, pad: u32) -> String {
        format!(
            "{}.{}",
            self.design.board.parts[part as usize].reference,
            self.design.footprints[part as usize].pads[pad as usize].number
        )
    }

    /// "pad R1.2 (net GND)", "track of net VCC", "via of net VCC", "hole H1.1".
    fn describe(&self, it: &Item) -> String {
        let net = it
            .net
            .map(|n| format!(" of net {}", self.net_name(n)))
            .unwrap_or_default();
        match it.owner {
            Owner::Pad { part, pad } => {
                let net = it
                    .net
                    .map(|n| format!(" (net {})", self.net_name(n)))
                    .unwrap_or_else(|| " (no net)".into());
                format!("pad {}{net}", self.pin_name(part, pad))
            }
            Owner::Hole { part, pad } => format!("hole {}", self.pin_name(part, pad)),
            Owner::Track(_) => format!("track{net}"),
            Owner::Via(_) => format!("via{net}"),
        }
    }

    fn parts_of(&self, items: &[&Item]) -> Vec<String> {
        let mut parts: Vec<String> = Vec::new();
        for it in items {
            if let Owner::Pad { part, .. } | Owner::Hole { part, .. } = it.owner {
                let r = &self.design.board.parts[part as usize].reference;
                if !parts.contains(r) {
                    parts.push(r.clone());
                }
            }
        }
        parts
    }

    fn nets_of(&self, items: &[&Item]) -> Vec<String> {
        let mut nets: Vec<String> = Vec::new();
        for it in items {
            if let Some(n) = it.net {
                let name = self.net_name(n).to_string();
                if !nets.contains(&name) {
                    nets.push(name);
                }
            }
        }
        nets
    }

    /// Records a violation, keeping only the worst (lowest `score`) per key.
    fn report(&mut self, key: Option<Key>, v: Violation, score: f64) {
        if let Some(key) = key {
            if let Some(&i) = self.seen.get(&key) {
                if score < self.found[i].1 {
                    self.found[i] = (v, score);
                }
                return;
            }
            self.seen.insert(key, self.found.len());
        }
        self.found.push((v, score));
    }

    fn find(&mut self, mut i: u32) -> u32 {
        while self.parent[i as usize] != i {
            let g = self.parent[self.parent[i as usize] as usize];
            self.parent[i as usize] = g;
            i = g;
        }
        i
    }

    fn union(&mut self, a: u32, b: u32) {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra != rb {
            let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
            self.parent[hi as usize] = lo;
        }
    }

    fn area(&self) -> Rect {
        let outline = self.design.board.outline.bounds();
        self.items
            .iter()
            .fold(outline, |r, it| r.union(&it.prim.bounds()))
    }

    /// Clearance and shorts between nets; joins touching copper of one net.
    fn copper_pairs(&mut self) {
        let max_clearance = self
            .design
            .board
            .classes
            .iter()
            .map(|c| c.clearance)
            .fold(self.design.board.rules.clearance, f64::max);
        let mut buckets = Buckets::new(self.area(), 2.0);
        for (i, it) in self.items.iter().enumerate() {
            buckets.insert(i as u32, &it.prim.bounds());
        }
        let mut near = Vec::new();
        for i in 0..self.items.len() {
            let a = self.items[i];
            buckets.query(
                &a.prim.bounds().inflate(max_clearance + TOLERANCE_MM),
                &mut near,
            );
            for &j in &near {
                if j as usize <= i {
                    continue;
                }
                let b = self.items[j as usize];
                if !a.layers.meets(b.layers) {
                    continue;
                }
                if let (
                    Owner::Pad { part: p, .. } | Owner::Hole { part: p, .. },
                    Owner::Pad { part: q, .. } | Owner::Hole { part: q, .. },
                ) = (a.owner, b.owner)
                    && p == q
                {
                    continue;
                }
                if let (Owner::Track(s), Owner::Track(t)) = (a.owner, b.owner)
                    && s == t
                {
                    // Consecutive segments of one track are one piece of copper.
                    self.union(i as u32, j);
                    continue;
                }
                let (gap, p, q) = a.prim.gap(&b.prim);
                if a.net.is_some() && a.net == b.net {
                    if gap <= TOLERANCE_MM {
                        self.union(i as u32, j);
                    }
                    continue;
                }
                let need = self.clearance_of(a.net).max(self.clearance_of(b.net));
                if gap >= need - TOLERANCE_MM {
                    continue;
                }
                let at = Point::new((p.x + q.x) / 2.0, (p.y + q.y) / 2.0);
                let layer = match a.layers.0 & b.layers.0 {
                    1 => " on top",
                    2 => " on bottom",
                    _ => "",
                };
                let (kind, message) = if gap <= 0.0 {
                    (
                        ViolationKind::Short,
                        format!("{} touches {}{layer}", self.describe(&a), self.describe(&b)),
                    )
                } else {
                    (
                        ViolationKind::Clearance,
                        format!(
                            "{} is {gap:.3} mm from {}{layer}; needs {need:.3} mm",
                            self.describe(&a),
                            self.describe(&b)
                        ),
                    )
                };
                let (o1, o2) = if (a.owner_key()) <= (b.owner_key()) {
                    (a.owner, b.owner)
                } else {
                    (b.owner, a.owner)
                };
                let v = Violation {
                    kind,
                    message,
                    at: Some(at),
                    parts: self.parts_of(&[&a, &b]),
                    nets: self.nets_of(&[&a, &b]),
                };
                // Shorts and clearance for one pair of owners share a key: keep the worst.
                self.report(Some((ViolationKind::Clearance, o1, Some(o2), 0)), v, gap);
            }
        }
    }

    fn edge_clearance(&mut self) {
        let board = &self.design.board;
        let outline = board.outline.vertices();
        let need = board.rules.edge_clearance;
        for i in 0..self.items.len() {
            let it = self.items[i];
            if let Owner::Hole { .. } = it.owner {
                continue;
            }
            let inside = board.outline.contains(it.prim.reference());
            let (gap, q) = edges(&outline)
                .map(|(a, b)| it.prim.gap_to_segment(a, b))
                .fold((f64::INFINITY, Point::default()), |m, g| {
                    if g.0 < m.0 { g } else { m }
                });
            if inside && gap >= need - TOLERANCE_MM {
                continue;
            }
            let message = if inside {
                format!(
                    "{} is {:.3} mm from the board edge; needs {need:.3} mm",
                    self.describe(&it),
                    gap.max(0.0)
                )
            } else {
                format!("{} lies outside the board", self.describe(&it))
            };
            let v = Violation {
                kind: ViolationKind::EdgeClearance,
                message,
                at: Some(if inside { q } else { it.prim.reference() }),
                parts: self.parts_of(&[&it]),
                nets: self.nets_of(&[&it]),
            };
            let score = if inside { gap } else { f64::NEG_INFINITY };
            self.report(
                Some((ViolationKind::EdgeClearance, it.owner, None, 0)),
                v,
                score,
            );
        }
    }

    fn copper_keepouts(&mut self) {
        let board = &self.design.board;
        for (ki, k) in board.keepouts.iter().enumerate() {
            if !k.copper {
                continue;
            }
            let layers = LayerSet::from_keepout(k.layers);
            let verts = k.shape.vertices();
            let bounds = k.shape.bounds();
            let name = if k.name.is_empty() {
                format!("keep-out {}", ki + 1)
            } else {
                format!("keep-out \"{}\"", k.name)
            };
            for i in 0..self.items.len() {
                let it = self.items[i];
                if matches!(it.owner, Owner::Hole { .. }) || !it.layers.meets(layers) {
                    continue;
                }
                if it.prim.bounds().overlap_area(&bounds) <= 0.0 {
                    continue;
                }
                if !overlaps_polygon(&it.prim, &verts) {
                    continue;
                }
                let v = Violation {
                    kind: ViolationKind::CopperKeepout,
                    message: format!("{} enters {name}", self.describe(&it)),
                    at: Some(it.prim.reference()),
                    parts: self.parts_of(&[&it]),
                    nets: self.nets_of(&[&it]),
                };
                self.report(
                    Some((ViolationKind::CopperKeepout, it.owner, None, ki)),
                    v,
                    0.0,
                );
            }
        }
    }

    fn track_widths(&mut self) {
        let board = &self.design.board;
        for t in &board.copper.tracks {
            let net = board
                .nets
                .iter()
                .position(|n| n.name == t.net)
                .map(|n| n as u32);
            let need = self.width_of(net);
            if t.width >= need - TOLERANCE_MM {
                continue;
            }
            let v = Violation {
                kind: ViolationKind::TrackWidth,
                message: format!(
                    "track of net {} on {} is {:.3} mm wide; its net needs {need:.3} mm",
                    t.net,
                    layer_name(t.layer),
                    t.width
                ),
                at: t.points.first().copied(),
                parts: Vec::new(),
                nets: vec![t.net.clone()],
            };
            self.report(None, v, 0.0);
        }
    }

    fn connectivity(&mut self) {
        for (n, pins) in self.design.net_pins.iter().enumerate() {
            // Pins with copper, in net order; unplaced parts are reported elsewhere.
            let pins: Vec<(u32, u32)> = pins
                .iter()
                .map(|p| (p.part.0, p.pad))
                .filter(|k| self.pad_item.contains_key(k))
                .collect();
            if pins.len() < 2 {
                continue;
            }
            let mut groups: Vec<(u32, Vec<(u32, u32)>)> = Vec::new();
            for &k in &pins {
                let root = self.find(self.pad_item[&k]);
                match groups.iter_mut().find(|g| g.0 == root) {
                    Some(g) => g.1.push(k),
                    None => groups.push((root, vec![k])),
                }
            }
            if groups.len() < 2 {
                continue;
            }
            let pieces: Vec<String> = groups
                .iter()
                .map(|g| {
                    g.1.iter()
                        .map(|&(part, pad)| self.pin_name(part, pad))
                        .collect::<Vec<_>>()
                        .join(", ")
                })
                .collect();
            let first_apart = groups[1].1[0];
            let at = placed_pad(self.design, PartId(first_apart.0), first_apart.1 as usize)
                .map(|p| p.at);
            let mut parts: Vec<String> = Vec::new();
            for &(part, _) in &pins {
                let r = &self.design.board.parts[part as usize].reference;
                if !parts.contains(r) {
                    parts.push(r.clone());
                }
            }
            let name = self.net_name(n as u32).to_string();
            let v = Violation {
                kind: ViolationKind::Unconnected,
                message: format!(
                    "net {name} is in {} unconnected pieces: {}",
                    groups.len(),
                    pieces
                        .iter()
                        .map(|p| format!("[{p}]"))
                        .collect::<Vec<_>>()
                        .join(" ")
                ),
                at,
                parts,
                nets: vec![name],
            };
            self.report(None, v, 0.0);
        }
    }

    fn courtyards(&mut self) {
        let design = self.design;
        let board = &design.board;
        let mut placed: Vec<(usize, Rect, LayerSet)> = Vec::new();
        for (i, part) in board.parts.iter().enumerate() {
            let id = PartId(i as u32);
            match design.courtyard(id) {
                Some(c) => {
                    let layers = if design.footprints[i].has_through_holes() {
                        LayerSet::BOTH
                    } else {
                        LayerSet::of_side(part.side)
                    };
                    placed.push((i, c, layers));
                }
                None => self.report(
                    None,
                    Violation {
                        kind: ViolationKind::Unplaced,
                        message: format!("part {} is not placed", part.reference),
                        at: None,
                        parts: vec![part.reference.clone()],
                        nets: Vec::new(),
                    },
                    0.0,
                ),
            }
        }
        let area = placed
            .iter()
            .fold(board.outline.bounds(), |r, p| r.union(&p.1));
        let mut buckets = Buckets::new(area, 5.0);
        for (k, p) in placed.iter().enumerate() {
            buckets.insert(k as u32, &p.1);
        }
        let mut near = Vec::new();
        for (k, &(i, c, layers)) in placed.iter().enumerate() {
            buckets.query(&c, &mut near);
            near.sort_unstable();
            for &m in &near {
                let (j, d, other_layers) = placed[m as usize];
                if m as usize <= k || !layers.meets(other_layers) {
                    continue;
                }
                let overlap = c.overlap_area(&d);
                if overlap <= TOLERANCE_MM * TOLERANCE_MM {
                    continue;
                }
                let inter = Rect::new(
                    c.min.x.max(d.min.x),
                    c.min.y.max(d.min.y),
                    c.max.x.min(d.max.x),
                    c.max.y.min(d.max.y),
                );
                let (a, b) = (&board.parts[i].reference, &board.parts[j].reference);
                self.report(
                    None,
                    Violation {
                        kind: ViolationKind::CourtyardOverlap,
                        message: format!("courtyards of {a} and {b} overlap by {overlap:.3} mm²"),
                        at: Some(inter.center()),
                        parts: vec![a.clone(), b.clone()],
                        nets: Vec::new(),
                    },
                    0.0,
                );
            }
            let r = &board.parts[i].reference;
            let inside = board.outline.overlap_with_rect(&c);
            if inside < c.area() - 1e-9 {
                self.report(
                    None,
                    Violation {
                        kind: ViolationKind::CourtyardOutsideBoard,
                        message: format!(
                            "courtyard of {r} reaches {:.3} mm² outside the board",
                            c.area() - inside
                        ),
                        at: Some(c.center()),
                        parts: vec![r.clone()],
                        nets: Vec::new(),
                    },
                    0.0,
                );
            }
            for (ki, kp) in board.keepouts.iter().enumerate() {
                if !kp.parts || !LayerSet::from_keepout(kp.layers).meets(layers) {
                    continue;
                }
                let overlap = kp.shape.overlap_with_rect(&c);
                if overlap > 1e-9 {
                    let name = if kp.name.is_empty() {
                        format!("keep-out {}", ki + 1)
                    } else {
                        format!("keep-out \"{}\"", kp.name)
                    };
                    self.report(
                        None,
                        Violation {
                            kind: ViolationKind::PartKeepout,
                            message: format!("courtyard of {r} enters {name} by {overlap:.3} mm²"),
                            at: Some(c.center()),
                            parts: vec![r.clone()],
                            nets: Vec::new(),
                        },
                        0.0,
                    );
                }
            }
        }
    }

    fn net_classes(&mut self) {
        let board = &self.design.board;
        for cl in &board.classes {
            let nets: Vec<String> = board
                .nets
                .iter()
                .filter(|n| n.class.as_deref() == Some(cl.name.as_str()))
                .map(|n| n.name.clone())
                .collect();
            if let Some(current) = cl.current {
                let rise = cl.temp_rise.unwrap_or(DEFAULT_TEMP_RISE_C);
                let need =
                    required_width_mm(current, rise, board.rules.copper_oz, LayerPosition::Outer);
                if cl.track_width < need - TOLERANCE_MM {
                    self.report(
                        None,
                        Violation {
                            kind: ViolationKind::ClassWidthForCurrent,
                            message: format!(
                                "net class {}: {current} A with a {rise} °C rise on {} oz copper \
                                 needs tracks {need:.3} mm wide (IPC-2221, outer layer); the class \
                                 gives {:.3} mm",
                                cl.name, board.rules.copper_oz, cl.track_width
                            ),
                            at: None,
                            parts: Vec::new(),
                            nets: nets.clone(),
                        },
                        0.0,
                    );
                }
            }
            if let Some(volts) = cl.voltage {
                let need = clearance_for_voltage_mm(volts, BOARD_SPACING);
                if cl.clearance < need - TOLERANCE_MM {
                    self.report(
                        None,
                        Violation {
                            kind: ViolationKind::ClassClearanceForVoltage,
                            message: format!(
                                "net class {}: {volts} V needs {need:.3} mm clearance (IPC-2221 \
                                 Table 6-1, B2 outer layers uncoated); the class gives {:.3} mm. \
                                 {SAFETY_NOTE}",
                                cl.name, cl.clearance
                            ),
                            at: None,
                            parts: Vec::new(),
                            nets,
                        },
                        0.0,
                    );
                }
            }
        }
    }
}

impl Item {
    /// A total order on owners, so a pair is keyed the same whichever comes first.
    fn owner_key(&self) -> (u8, u32, u32) {
        match self.owner {
            Owner::Pad { part, pad } => (0, part, pad),
            Owner::Hole { part, pad } => (1, part, pad),
            Owner::Track(t) => (2, t, 0),
            Owner::Via(v) => (3, v, 0),
        }
    }
}

fn layer_name(l: Layer) -> &'static str {
    match l {
        Layer::Top => "top",
        Layer::Bottom => "bottom",
    }
}

/// Whether a shape shares area with a polygon (touching along the boundary does not
/// count).
fn overlaps_polygon(prim: &Prim, poly: &[Point]) -> bool {
    let t = TOLERANCE_MM;
    if crate::model::geom::point_in_polygon(prim.reference(), poly) {
        // The reference may sit on the boundary; then a crossing edge decides below.
        let on_edge =
            edges(poly).any(|(a, b)| Prim::Seg { a, b, r: 0.0 }.gap_to_point(prim.reference()) < t);
        if !on_edge {
            return true;
        }
    }
    if poly.iter().any(|&v| prim.gap_to_point(v) < -t) {
        return true;
    }
    let r = prim.radius();
    if edges(poly).any(|(a, b)| prim.gap_to_segment(a, b).0 < -t) {
        return true;
    }
    // A sharp-cornered rectangle: an edge entering its interior, or a vertex inside it.
    if let Prim::Box { core, .. } = prim
        && r < t
    {
        let inner = core.inflate(-t);
        if inner.width() > 0.0 && inner.height() > 0.0 {
            if poly.iter().any(|&v| inner.contains(v)) {
                return true;
            }
            let inner_prim = Prim::Box {
                core: inner,
                r: 0.0,
            };
            if edges(poly).any(|(a, b)| inner_prim.gap_to_segment(a, b).0 <= 0.0) {
                return true;
            }
        }
    }
    false
}
