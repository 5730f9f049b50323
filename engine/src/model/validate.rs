//! Validates a [`Board`] and resolves it into a [`Design`]: footprints expanded, pins
//! resolved, every number finite and sane. Each problem names the offending item by a
//! [`ItemPath`] (`parts[3].footprint`), which the file loader turns into a line and column.

use std::collections::{HashMap, HashSet};
use std::fmt;

use super::board::{Board, Design, NetId, PartId, PinRef, Rules, Shape};
use super::footprint::Footprint;
use super::geom::{self, MAX_ROTATION_DEG, Quarter};
use super::text::{escape_controls, fmt_num};

/// Largest coordinate or size accepted anywhere, in mm (a 10 m board is absurd already).
pub const MAX_COORD_MM: f64 = 10_000.0;

/// One step of a path into the board file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum PathSeg {
    Field(&'static str),
    Index(usize),
}

/// Where in the board a problem is: a path of fields and list indices.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct ItemPath(pub Vec<PathSeg>);

impl ItemPath {
    pub fn field(mut self, f: &'static str) -> Self {
        self.0.push(PathSeg::Field(f));
        self
    }

    pub fn index(mut self, i: usize) -> Self {
        self.0.push(PathSeg::Index(i));
        self
    }

    fn root(f: &'static str) -> Self {
        ItemPath::default().field(f)
    }
}

impl fmt::Display for ItemPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, s) in self.0.iter().enumerate() {
            match s {
                PathSeg::Field(n) if i == 0 => write!(f, "{n}")?,
                PathSeg::Field(n) => write!(f, ".{n}")?,
                PathSeg::Index(k) => write!(f, "[{k}]")?,
            }
        }
        Ok(())
    }
}

/// A problem found in a board, with the item it concerns.
#[derive(Clone, Debug, PartialEq)]
pub struct Problem {
    pub path: ItemPath,
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.path, self.message)
    }
}

struct Checker {
    problems: Vec<Problem>,
}

impl Checker {
    /// Records a problem. Control characters (from names in the file) are escaped, so
    /// that each message stays one line.
    fn report(&mut self, path: ItemPath, message: impl Into<String>) {
        let message = message.into();
        let message = match escape_controls(&message) {
            std::borrow::Cow::Borrowed(_) => message,
            std::borrow::Cow::Owned(escaped) => escaped,
        };
        self.problems.push(Problem { path, message });
    }

    /// A length or coordinate: finite and within `lo..=hi`.
    fn number(&mut self, path: ItemPath, what: &str, v: f64, lo: f64, hi: f64) -> bool {
        if !v.is_finite() {
            self.report(
                path,
                format!("{what} is not a finite number ({})", fmt_num(v)),
            );
            false
        } else if v < lo || v > hi {
            self.report(
                path,
                format!(
                    "{what} {} is outside the sane range {} to {}",
                    fmt_num(v),
                    fmt_num(lo),
                    fmt_num(hi)
                ),
            );
            false
        } else {
            true
        }
    }

    fn shape(&mut self, path: ItemPath, what: &str, s: &Shape) -> bool {
        match s {
            Shape::Rect { min, max } => {
                let mut ok = true;
                for (f, v) in [
                    ("min", min.x),
                    ("min", min.y),
                    ("max", max.x),
                    ("max", max.y),
                ] {
                    ok &= self.number(path.clone().field(f), what, v, -MAX_COORD_MM, MAX_COORD_MM);
                }
                if ok && (max.x <= min.x || max.y <= min.y) {
                    self.report(
                        path,
                        format!(
                            "{what} rectangle has no area: max must lie above and right of min"
                        ),
                    );
                    ok = false;
                }
                ok
            }
            Shape::Polygon(pts) => {
                if pts.len() < 3 {
                    self.report(path, format!("{what} polygon needs at least 3 vertices"));
                    return false;
                }
                let mut ok = true;
                for (i, p) in pts.iter().enumerate() {
                    let pp = path.clone().index(i);
                    ok &= self.number(pp.clone(), what, p.x, -MAX_COORD_MM, MAX_COORD_MM)
                        && self.number(pp, what, p.y, -MAX_COORD_MM, MAX_COORD_MM);
                }
                if !ok {
                    return false;
                }
                if let Some((i, j)) = geom::self_crossings(pts) {
                    self.report(
                        path,
                        format!("{what} polygon crosses itself (edge {i} meets edge {j})"),
                    );
                    return false;
                }
                if geom::signed_area(pts).abs() <= 0.0 {
                    self.report(path, format!("{what} polygon has no area"));
                    return false;
                }
                true
            }
        }
    }
}

/// The problems of a board that failed [`resolve`], as one line: `a; b; c`.
pub fn problems_line(problems: &[Problem]) -> String {
    problems
        .iter()
        .map(|p| p.to_string())
        .collect::<Vec<_>>()
        .join("; ")
}

/// Validates the board and builds the resolved design, or returns every problem found.
pub fn resolve(mut board: Board) -> Result<Design, Vec<Problem>> {
    drop_closing_vertex(&mut board.outline);
    for k in &mut board.keepouts {
        drop_closing_vertex(&mut k.shape);
    }
    let mut c = Checker {
        problems: Vec::new(),
    };
    let outline_ok = c.shapes(&board);
    c.optimum(&board);
    c.rules(&board.rules);
    let class_names = c.classes(&board);
    let (footprints, refs, courtyard_area) = c.parts(&board);
    let (net_names, net_pins) = c.nets(&board, &class_names, &refs, &footprints);
    c.copper(&board, &net_names);
    if outline_ok {
        c.area(&board, courtyard_area);
    }

    if c.problems.is_empty() {
        Ok(Design {
            board,
            footprints,
            net_pins,
        })
    } else {
        Err(c.problems)
    }
}

/// Removes the last vertex of a polygon that repeats the first: polygons are closed
/// implicitly, and writing the closing vertex out is a common habit.
fn drop_closing_vertex(shape: &mut Shape) {
    if let Shape::Polygon(pts) = shape
        && pts.len() > 3
        && pts.first() == pts.last()
    {
        pts.pop();
    }
}

/// The steps of [`resolve`], in the order their problems are listed.
impl Checker {
    /// The outline and the keep-outs' shapes; whether the outline is sound.
    fn shapes(&mut self, board: &Board) -> bool {
        let outline_ok = self.shape(ItemPath::root("outline"), "outline", &board.outline);
        for (i, k) in board.keepouts.iter().enumerate() {
            self.shape(
                ItemPath::root("keepouts").index(i).field("shape"),
                "keep-out",
                &k.shape,
            );
        }
        outline_ok
    }

    /// The known optimum and the placement record, when given.
    fn optimum(&mut self, board: &Board) {
        if let Some(r) = &board.placement {
            let p = ItemPath::root("placement");
            self.number(
                p.clone().field("energy"),
                "placement energy",
                r.energy,
                f64::MIN,
                f64::MAX,
            );
            self.number(
                p.field("wirelength_mm"),
                "placement wirelength",
                r.wirelength_mm,
                0.0,
                1e12,
            );
        }
        if let Some(o) = &board.optimum {
            self.number(
                ItemPath::root("optimum").field("wirelength_mm"),
                "known optimal wirelength",
                o.wirelength_mm,
                0.0,
                1e12,
            );
        }
    }

    /// The design rules' numbers.
    fn rules(&mut self, r: &Rules) {
        let rules = ItemPath::root("rules");
        self.number(
            rules.clone().field("clearance"),
            "clearance",
            r.clearance,
            0.0,
            100.0,
        );
        self.number(
            rules.clone().field("track_width"),
            "track width",
            r.track_width,
            0.01,
            100.0,
        );
        self.number(
            rules.clone().field("via_drill"),
            "via drill",
            r.via_drill,
            0.01,
            10.0,
        );
        if self.number(
            rules.clone().field("via_diameter"),
            "via diameter",
            r.via_diameter,
            0.02,
            20.0,
        ) && r.via_diameter <= r.via_drill
        {
            self.report(
                rules.clone().field("via_diameter"),
                "via diameter must be larger than the via drill",
            );
        }
        self.number(
            rules.clone().field("routing_grid"),
            "routing grid",
            r.routing_grid,
            0.01,
            10.0,
        );
        self.number(
            rules.clone().field("placement_grid"),
            "placement grid",
            r.placement_grid,
            0.001,
            100.0,
        );
        self.number(
            rules.clone().field("edge_clearance"),
            "edge clearance",
            r.edge_clearance,
            0.0,
            100.0,
        );
        self.number(
            rules.clone().field("copper_oz"),
            "copper weight",
            r.copper_oz,
            0.1,
            20.0,
        );
    }

    /// The net classes; their names.
    fn classes<'a>(&mut self, board: &'a Board) -> HashSet<&'a str> {
        let mut class_names = HashSet::new();
        for (i, cl) in board.classes.iter().enumerate() {
            let p = ItemPath::root("classes").index(i);
            if !class_names.insert(cl.name.as_str()) {
                self.report(
                    p.clone().field("name"),
                    format!("net class \"{}\" is defined twice", cl.name),
                );
            }
            self.number(
                p.clone().field("track_width"),
                "track width",
                cl.track_width,
                0.01,
                100.0,
            );
            self.number(
                p.clone().field("clearance"),
                "clearance",
                cl.clearance,
                0.0,
                100.0,
            );
            if let Some(a) = cl.current {
                self.number(p.clone().field("current"), "current", a, 0.0, 1000.0);
            }
            if let Some(v) = cl.voltage {
                self.number(p.clone().field("voltage"), "voltage", v, 0.0, 100_000.0);
            }
            if let Some(t) = cl.temp_rise {
                self.number(
                    p.clone().field("temp_rise"),
                    "temperature rise",
                    t,
                    0.1,
                    200.0,
                );
            }
        }
        class_names
    }

    /// The parts; their footprints (an empty one where the spec is bad), the index of
    /// each reference and the courtyards' total area.
    fn parts<'a>(&mut self, board: &'a Board) -> (Vec<Footprint>, HashMap<&'a str, usize>, f64) {
        let mut footprints = Vec::with_capacity(board.parts.len());
        let mut refs: HashMap<&str, usize> = HashMap::new();
        let mut courtyard_area = 0.0;
        for (i, part) in board.parts.iter().enumerate() {
            let p = ItemPath::root("parts").index(i);
            if part.reference.trim().is_empty()
                || part.reference.contains(char::is_whitespace)
                || part.reference.contains('.')
            {
                self.report(
                    p.clone().field("reference"),
                    format!(
                        "reference \"{}\" must be non-empty, without spaces or dots",
                        part.reference
                    ),
                );
            }
            if let Some(first) = refs.insert(part.reference.as_str(), i) {
                self.report(
                    p.clone().field("reference"),
                    format!(
                        "duplicate reference \"{}\" (also parts[{first}])",
                        part.reference
                    ),
                );
            }
            match part.footprint.build() {
                Ok(fp) => {
                    courtyard_area += fp.courtyard.area();
                    footprints.push(fp);
                }
                Err(e) => {
                    self.report(
                        p.clone().field("footprint"),
                        format!("{}: {e}", part.reference),
                    );
                    footprints.push(Footprint {
                        name: String::new(),
                        pads: Vec::new(),
                        body: Default::default(),
                        courtyard: Default::default(),
                    });
                }
            }
            if let Some(at) = part.at {
                self.number(
                    p.clone().field("at"),
                    "position x",
                    at.x,
                    -MAX_COORD_MM,
                    MAX_COORD_MM,
                );
                self.number(
                    p.clone().field("at"),
                    "position y",
                    at.y,
                    -MAX_COORD_MM,
                    MAX_COORD_MM,
                );
            }
            if part.rotation.is_finite() && part.rotation.abs() > MAX_ROTATION_DEG {
                self.report(
                    p.clone().field("rotation"),
                    format!(
                        "{}: rotation {} is outside the sane range {} to {} degrees",
                        part.reference,
                        fmt_num(part.rotation),
                        fmt_num(-MAX_ROTATION_DEG),
                        fmt_num(MAX_ROTATION_DEG)
                    ),
                );
            } else if Quarter::from_degrees(part.rotation).is_none() {
                self.report(
                    p.clone().field("rotation"),
                    format!(
                        "{}: rotation {} is not a multiple of 90 degrees",
                        part.reference,
                        fmt_num(part.rotation)
                    ),
                );
            }
            if part.locked && part.at.is_none() {
                self.report(
                    p.clone().field("locked"),
                    format!(
                        "{} is locked but has no position (give it `at` or unlock it)",
                        part.reference
                    ),
                );
            }
        }
        (footprints, refs, courtyard_area)
    }

    /// The nets and their pins; the net names and each net's resolved pins.
    fn nets<'a>(
        &mut self,
        board: &'a Board,
        class_names: &HashSet<&str>,
        refs: &HashMap<&str, usize>,
        footprints: &[Footprint],
    ) -> (HashSet<&'a str>, Vec<Vec<PinRef>>) {
        let mut net_names = HashSet::new();
        let mut pin_owner: HashMap<(usize, u32), usize> = HashMap::new();
        let mut net_pins = Vec::with_capacity(board.nets.len());
        for (ni, net) in board.nets.iter().enumerate() {
            let p = ItemPath::root("nets").index(ni);
            if !net_names.insert(net.name.as_str()) {
                self.report(
                    p.clone().field("name"),
                    format!("net \"{}\" is defined twice", net.name),
                );
            }
            if let Some(cl) = &net.class
                && !class_names.contains(cl.as_str())
            {
                self.report(
                    p.clone().field("class"),
                    format!("net \"{}\" names unknown class \"{cl}\"", net.name),
                );
            }
            self.number(
                p.clone().field("weight"),
                "net weight",
                net.weight,
                0.0,
                1000.0,
            );
            let mut pins = Vec::with_capacity(net.pins.len());
            for (k, pin) in net.pins.iter().enumerate() {
                let pp = p.clone().field("pins").index(k);
                let Some((r, num)) = pin.split_once('.') else {
                    self.report(
                        pp,
                        format!("pin \"{pin}\" must be written REF.PIN, e.g. U1.3"),
                    );
                    continue;
                };
                let Some(&pi) = refs.get(r) else {
                    self.report(
                        pp,
                        format!(
                            "net \"{}\": pin \"{pin}\" names unknown part \"{r}\"",
                            net.name
                        ),
                    );
                    continue;
                };
                let Some(pad) = footprints[pi].pad_index(num) else {
                    if !footprints[pi].name.is_empty() {
                        self.report(
                            pp,
                            format!(
                                "net \"{}\": part {r} ({}) has no pin \"{num}\"",
                                net.name, footprints[pi].name
                            ),
                        );
                    }
                    continue;
                };
                let key = (pi, pad as u32);
                if let Some(&other) = pin_owner.get(&key) {
                    if other == ni {
                        self.report(pp, format!("net \"{}\" lists pin {pin} twice", net.name));
                    } else {
                        self.report(
                            pp,
                            format!(
                                "pin {pin} is on two nets: \"{}\" and \"{}\"",
                                board.nets[other].name, net.name
                            ),
                        );
                    }
                    continue;
                }
                pin_owner.insert(key, ni);
                pins.push(PinRef {
                    part: PartId(pi as u32),
                    pad: pad as u32,
                });
            }
            net_pins.push(pins);
        }
        (net_names, net_pins)
    }

    /// The tracks and vias.
    fn copper(&mut self, board: &Board, net_names: &HashSet<&str>) {
        for (i, t) in board.copper.tracks.iter().enumerate() {
            let p = ItemPath::root("copper").field("tracks").index(i);
            self.number(
                p.clone().field("width"),
                "track width",
                t.width,
                0.01,
                100.0,
            );
            if t.points.len() < 2 {
                self.report(
                    p.clone().field("points"),
                    "a track needs at least two points",
                );
            }
            for pt in &t.points {
                if !pt.is_finite() || pt.x.abs() > MAX_COORD_MM || pt.y.abs() > MAX_COORD_MM {
                    self.report(
                        p.clone().field("points"),
                        format!(
                            "track point ({}, {}) is not a sane coordinate",
                            fmt_num(pt.x),
                            fmt_num(pt.y)
                        ),
                    );
                    break;
                }
            }
            if !net_names.contains(t.net.as_str()) {
                self.report(
                    p.field("net"),
                    format!("track on unknown net \"{}\"", t.net),
                );
            }
        }
        for (i, v) in board.copper.vias.iter().enumerate() {
            let p = ItemPath::root("copper").field("vias").index(i);
            self.number(p.clone().field("drill"), "via drill", v.drill, 0.01, 10.0);
            self.number(
                p.clone().field("diameter"),
                "via diameter",
                v.diameter,
                0.02,
                20.0,
            );
            if !v.at.is_finite() || v.at.x.abs() > MAX_COORD_MM || v.at.y.abs() > MAX_COORD_MM {
                self.report(
                    p.clone().field("at"),
                    "via position is not a sane coordinate",
                );
            }
            if !net_names.contains(v.net.as_str()) {
                self.report(p.field("net"), format!("via on unknown net \"{}\"", v.net));
            }
        }
    }

    /// The board's area against the parts' courtyards.
    fn area(&mut self, board: &Board, courtyard_area: f64) {
        let board_area = board.outline.area();
        if courtyard_area > board_area * (1.0 + 1e-9) {
            self.report(
                ItemPath::root("outline"),
                format!(
                    "the board ({board_area:.1} mm²) is smaller than the parts' total courtyard area ({courtyard_area:.1} mm²)"
                ),
            );
        }
    }
}

/// A net id for the net at position `i`.
pub fn net_id(i: usize) -> NetId {
    NetId(i as u32)
}
