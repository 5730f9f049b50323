//! The board as the user writes it (serde types that map one-to-one onto the RON board
//! file, see docs/board-format.md) and the checked, resolved [`Design`] the engine works on.

use serde::{Deserialize, Serialize};

use super::footprint::Footprint;
use super::footprint::FootprintSpec;
use super::geom::{Point, Quarter, Rect};

/// A whole board file.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Board {
    /// Display name (window title, reports).
    pub name: String,
    /// The board edge.
    pub outline: Shape,
    /// Areas parts (and, for routing, copper) must stay clear of.
    #[serde(default)]
    pub keepouts: Vec<Keepout>,
    #[serde(default)]
    pub rules: Rules,
    /// Net classes; nets without a class use the rules' defaults.
    #[serde(default)]
    pub classes: Vec<NetClass>,
    pub parts: Vec<Part>,
    #[serde(default)]
    pub nets: Vec<Net>,
    /// Routed copper, if any.
    #[serde(default)]
    pub copper: Copper,
    /// How the current positions were produced, written by `lehr place`.
    #[serde(default)]
    pub placement: Option<PlacementRecord>,
    /// The shortest wiring any placement of this board can have, when it is known (the
    /// generated benchmark boards of `lehr generate` record theirs).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub optimum: Option<KnownOptimum>,
}

/// A board's known optimal wiring: the lowest total half-perimeter wirelength (net
/// weights applied) of any legal placement, and how it is known.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct KnownOptimum {
    pub wirelength_mm: f64,
    /// The construction or proof, in a few words.
    pub how: String,
}

/// A region of the board: a rectangle or a simple polygon (vertices in order, not closed,
/// no self-crossings).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum Shape {
    Rect { min: Point, max: Point },
    Polygon(Vec<Point>),
}

impl Shape {
    pub fn bounds(&self) -> Rect {
        match self {
            Shape::Rect { min, max } => Rect {
                min: *min,
                max: *max,
            },
            Shape::Polygon(pts) => Rect::bounding(pts.iter().copied()).unwrap_or_default(),
        }
    }

    pub fn area(&self) -> f64 {
        match self {
            Shape::Rect { min, max } => Rect {
                min: *min,
                max: *max,
            }
            .area(),
            Shape::Polygon(pts) => super::geom::signed_area(pts).abs(),
        }
    }

    /// Area of the shape's intersection with a rectangle.
    pub fn overlap_with_rect(&self, r: &Rect) -> f64 {
        match self {
            Shape::Rect { min, max } => Rect {
                min: *min,
                max: *max,
            }
            .overlap_area(r),
            Shape::Polygon(pts) => super::geom::polygon_rect_overlap_area(pts, r),
        }
    }

    pub fn contains(&self, p: Point) -> bool {
        match self {
            Shape::Rect { min, max } => Rect {
                min: *min,
                max: *max,
            }
            .contains(p),
            Shape::Polygon(pts) => super::geom::point_in_polygon(p, pts),
        }
    }

    /// The vertices in order (a rectangle's four corners counter-clockwise).
    pub fn vertices(&self) -> Vec<Point> {
        match self {
            Shape::Rect { min, max } => Rect {
                min: *min,
                max: *max,
            }
            .corners()
            .to_vec(),
            Shape::Polygon(pts) => pts.clone(),
        }
    }
}

/// Which copper sides something applies to.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Layers {
    #[default]
    Both,
    Top,
    Bottom,
}

/// A keep-out area.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Keepout {
    #[serde(default)]
    pub name: String,
    pub shape: Shape,
    #[serde(default)]
    pub layers: Layers,
    /// Parts' courtyards must stay out (default true).
    #[serde(default = "yes")]
    pub parts: bool,
    /// Tracks and vias must stay out (default true).
    #[serde(default = "yes")]
    pub copper: bool,
}

fn yes() -> bool {
    true
}

/// Design rules, in mm.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Rules {
    /// Minimum copper-to-copper gap between different nets.
    pub clearance: f64,
    /// Default track width.
    pub track_width: f64,
    pub via_drill: f64,
    pub via_diameter: f64,
    /// Pitch of the router's grid.
    pub routing_grid: f64,
    /// Part origins snap to multiples of this.
    pub placement_grid: f64,
    /// Minimum gap from copper to the board edge.
    pub edge_clearance: f64,
    /// Copper weight in oz/ft^2 (1 oz is 0.035 mm thick).
    pub copper_oz: f64,
}

impl Default for Rules {
    fn default() -> Self {
        Rules {
            clearance: 0.2,
            track_width: 0.25,
            via_drill: 0.3,
            via_diameter: 0.6,
            routing_grid: 0.25,
            placement_grid: 0.5,
            edge_clearance: 0.3,
            copper_oz: 1.0,
        }
    }
}

/// A class of nets sharing width and clearance, with optional electrical ratings.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NetClass {
    pub name: String,
    pub track_width: f64,
    pub clearance: f64,
    /// Continuous current the nets carry, in A.
    #[serde(default)]
    pub current: Option<f64>,
    /// Highest voltage to other nets, in V (DC or AC peak).
    #[serde(default)]
    pub voltage: Option<f64>,
    /// Allowed conductor temperature rise in degrees C (default 10).
    #[serde(default)]
    pub temp_rise: Option<f64>,
}

/// Top or bottom of the board.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Side {
    #[default]
    Top,
    Bottom,
}

/// A component on the board.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Part {
    /// Reference designator, unique on the board ("R1", "U3").
    pub reference: String,
    pub footprint: FootprintSpec,
    #[serde(default)]
    pub value: String,
    /// Origin position in mm; `None` lets the placer choose.
    #[serde(default)]
    pub at: Option<Point>,
    /// Counter-clockwise degrees, a multiple of 90.
    #[serde(default)]
    pub rotation: f64,
    #[serde(default)]
    pub side: Side,
    /// Locked parts never move.
    #[serde(default)]
    pub locked: bool,
}

/// Maps a point in footprint coordinates onto the board for a part at `at`, turned by
/// `q` and on `side`. Bottom-side parts are seen through the board: the footprint is first
/// mirrored about its y axis (x -> -x), then turned, then moved. This single convention is
/// used by placement, routing, checking and drawing.
#[inline]
pub fn to_board(p: Point, at: Point, q: Quarter, side: Side) -> Point {
    let m = match side {
        Side::Top => p,
        Side::Bottom => Point::new(-p.x, p.y),
    };
    q.apply(m).add(at)
}

/// [`to_board`] for an axis-aligned rectangle.
pub fn rect_to_board(r: &Rect, at: Point, q: Quarter, side: Side) -> Rect {
    let a = to_board(r.min, at, q, side);
    let b = to_board(r.max, at, q, side);
    Rect::new(a.x.min(b.x), a.y.min(b.y), a.x.max(b.x), a.y.max(b.y))
}

impl Part {
    /// The part's rotation as quarter turns (checked boards only hold multiples of 90).
    pub fn quarter(&self) -> Quarter {
        Quarter::from_degrees(self.rotation).unwrap_or_default()
    }
}

/// A net: the pins it joins, written `REF.PIN`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Net {
    pub name: String,
    /// Name of a [`NetClass`]; `None` uses the rules' defaults.
    #[serde(default)]
    pub class: Option<String>,
    pub pins: Vec<String>,
    /// Weight of this net's wirelength in the placement energy (default 1).
    #[serde(default = "one")]
    pub weight: f64,
}

fn one() -> f64 {
    1.0
}

/// Copper layer.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Layer {
    #[default]
    Top,
    Bottom,
}

/// Routed copper stored with the board.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Copper {
    #[serde(default)]
    pub tracks: Vec<Track>,
    #[serde(default)]
    pub vias: Vec<Via>,
}

/// A polyline of copper on one layer.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Track {
    pub net: String,
    pub layer: Layer,
    pub width: f64,
    pub points: Vec<Point>,
}

/// A plated hole joining the two layers.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Via {
    pub net: String,
    pub at: Point,
    pub drill: f64,
    pub diameter: f64,
}

/// What produced the stored placement, so a run can be repeated.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlacementRecord {
    pub seed: u64,
    pub schedule: String,
    pub moves: u64,
    pub energy: f64,
    pub wirelength_mm: f64,
    pub legal: bool,
    /// The start the kept result came from (`given` or `spectral`).
    #[serde(default)]
    pub start: String,
    /// Annealing chains per start.
    #[serde(default = "one_replica")]
    pub replicas: u32,
}

fn one_replica() -> u32 {
    1
}

/// Index of a part in [`Board::parts`] (and in every per-part table of the engine).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct PartId(pub u32);

impl PartId {
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// Index of a net in [`Board::nets`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct NetId(pub u32);

impl NetId {
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// A pin resolved to its part and pad index.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct PinRef {
    pub part: PartId,
    pub pad: u32,
}

/// A board that passed every check, with footprints expanded and pins resolved.
/// Construct it with [`Design::new`] (see `model::validate`).
#[derive(Clone, Debug)]
pub struct Design {
    pub board: Board,
    /// One per part, same order as `board.parts`.
    pub footprints: Vec<Footprint>,
    /// One per net, same order as `board.nets`.
    pub net_pins: Vec<Vec<PinRef>>,
}

impl Design {
    pub fn part(&self, id: PartId) -> &Part {
        &self.board.parts[id.index()]
    }

    pub fn part_id(&self, reference: &str) -> Option<PartId> {
        self.board
            .parts
            .iter()
            .position(|p| p.reference == reference)
            .map(|i| PartId(i as u32))
    }

    /// Board position of a pin (the pad centre), or `None` while its part is unplaced.
    pub fn pin_position(&self, pin: PinRef) -> Option<Point> {
        let part = self.part(pin.part);
        let at = part.at?;
        let pad = &self.footprints[pin.part.index()].pads[pin.pad as usize];
        Some(to_board(pad.at, at, part.quarter(), part.side))
    }

    /// Board rectangle of a part's courtyard, or `None` while it is unplaced.
    pub fn courtyard(&self, id: PartId) -> Option<Rect> {
        let part = self.part(id);
        let at = part.at?;
        Some(rect_to_board(
            &self.footprints[id.index()].courtyard,
            at,
            part.quarter(),
            part.side,
        ))
    }

    /// For every part, for every pad: the net it is on, if any (`net_pins` turned
    /// around).
    pub fn pad_nets(&self) -> Vec<Vec<Option<NetId>>> {
        let mut out: Vec<Vec<Option<NetId>>> = self
            .footprints
            .iter()
            .map(|f| vec![None; f.pads.len()])
            .collect();
        for (net, pins) in self.net_pins.iter().enumerate() {
            for pin in pins {
                out[pin.part.index()][pin.pad as usize] = Some(NetId(net as u32));
            }
        }
        out
    }

    /// Class of a net, if it names one.
    pub fn net_class(&self, net: NetId) -> Option<&NetClass> {
        let name = self.board.nets[net.index()].class.as_deref()?;
        self.board.classes.iter().find(|c| c.name == name)
    }
}
